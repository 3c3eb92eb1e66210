"""The e-assist catalogue: legal envelopes read from ``data/motors.toml``."""

from __future__ import annotations

import functools
from collections.abc import Mapping
from typing import Any

from cardgen.errors import VehicleError
from cardgen.io.files import read_package_toml
from cardgen.physics.assist import Motor
from cardgen.profiles.tables import check_numbers

#: key in the file → attribute of :class:`~cardgen.physics.assist.Motor`
NUMBERS = {
    "rated_power_w": "rated_power",
    "peak_power_w": "peak_power",
    "cutoff_kmh": "cutoff_speed",
    "taper_kmh": "taper",
    "drive_efficiency": "drive_efficiency",
    "battery_wh": "battery",
    "usable_share": "usable_share",
}


def motor_from_table(name: str, table: Mapping[str, Any], where: str) -> Motor:
    """Build and validate one envelope; every problem is reported together."""
    values, problems = check_numbers(table, NUMBERS)
    levels = table.get("levels")
    if (
        not isinstance(levels, list)
        or not levels
        or not all(isinstance(x, int | float) and not isinstance(x, bool) and 0 < x <= 10 for x in levels)
        or list(levels) != sorted(levels)
    ):
        problems.append("'levels' must be a rising list of assist ratios, e.g. [0.5, 1.0, 2.0]")
    if problems or not isinstance(levels, list):
        raise VehicleError(f"{where}: motor '{name}':\n  " + "\n  ".join(problems))
    return Motor(
        name=name,
        label=str(table.get("label", name)),
        rule=str(table.get("rule", "")),
        levels=tuple(float(x) for x in levels),
        throttle=bool(table.get("throttle", False)),
        sources=dict(table.get("sources", {})),
        **values,
    )


@functools.cache
def builtin_motors() -> dict[str, Motor]:
    """The built-in envelopes, by name (read once per process)."""
    data = read_package_toml("cardgen.profiles", "data", "motors.toml")
    return {name: motor_from_table(name, t, "built-in motors") for name, t in data.items()}


def find_motor(name: str) -> Motor:
    """A built-in envelope by name."""
    motors = builtin_motors()
    if name not in motors:
        raise VehicleError(f"unknown motor '{name}'; use one of: {', '.join(motors)}")
    return motors[name]
