"""E-assist: motor power, battery use, and the assist level to choose.

Levels are numbered from 1 and named by their ratio ("level 2 (100 %)"); level 0 is
"off". Presets follow published legal envelopes and are named by rule.

References
----------
Regulation (EU) No 168/2013 of the European Parliament and of the Council, Art. 2(2)(h)
(OJ L 60, 2.3.2013): pedal assistance up to 250 W continuous rated power, cut off
before 25 km/h. EN 15194:2017, Cycles — Electrically power assisted cycles — EPAC
bicycles. 15 U.S.C. § 2085(b) (low-speed electric bicycles: < 750 W, < 20 mph).
California Vehicle Code § 312.5 (classes 1, 2 and 3).
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from importlib import resources
from typing import Any

import numpy as np

from cardgen.errors import VehicleError


@dataclass(frozen=True)
class Motor:
    """An e-assist envelope, SI units: powers [W], speeds [m/s], battery [J]."""

    name: str
    label: str
    rule: str
    rated_power: float
    peak_power: float
    cutoff_speed: float
    taper: float
    drive_efficiency: float
    battery: float
    usable_share: float
    levels: tuple[float, ...]
    throttle: bool
    sources: Mapping[str, str] = field(default_factory=dict, compare=False)

    @property
    def usable_battery(self) -> float:
        """Energy that can be drawn [J]."""
        return self.battery * self.usable_share

    def level_name(self, level: int) -> str:
        """"off", or "level N (R %)"."""
        if level == 0:
            return "off"
        return f"level {level} ({self.levels[level - 1] * 100:.0f} %)"


def taper_factor(speed, cutoff_speed: float, taper: float):
    """Share of assistance left at a speed: 1 below ``cutoff − taper``, falling
    linearly to 0 at the cut-off and above (the "progressively reduced and finally
    cut off" of Regulation (EU) No 168/2013, Art. 2(2)(h))."""
    v = np.asarray(speed, dtype=float)
    if taper <= 0:
        return np.where(v < cutoff_speed, 1.0, 0.0)[()]
    return np.clip((cutoff_speed - v) / taper, 0.0, 1.0)[()]


def motor_power(motor: Motor, ratio, speed, rider_power):
    """Motor power at the wheel [W].

    Parameters
    ----------
    motor : Motor
    ratio : float or array [-] assist ratio of the level in use (0 = off)
    speed : float or array [m/s]
    rider_power : float or array [W]

    Returns
    -------
    float or array [W]: min(ratio·rider power, peak) × taper factor; zero when the
    rider does not pedal (pedal assist) and at or above the cut-off speed.
    """
    p = np.asarray(rider_power, dtype=float)
    assist = np.minimum(np.asarray(ratio, dtype=float) * np.maximum(p, 0.0), motor.peak_power)
    return (assist * taper_factor(speed, motor.cutoff_speed, motor.taper))[()]


def battery_energy(motor: Motor, power, time) -> float:
    """Energy drawn from the battery [J] for motor powers [W] held for times [s]."""
    return float(np.sum(np.asarray(power) * np.asarray(time)) / motor.drive_efficiency)


_NUMBERS = {
    "rated_power_w": ("rated_power", 1.0, 1.0, 5000.0),
    "peak_power_w": ("peak_power", 1.0, 1.0, 5000.0),
    "cutoff_kmh": ("cutoff_speed", 1 / 3.6, 1.0, 80.0),
    "taper_kmh": ("taper", 1 / 3.6, 0.0, 20.0),
    "drive_efficiency": ("drive_efficiency", 1.0, 0.3, 1.0),
    "battery_wh": ("battery", 3600.0, 1.0, 10000.0),
    "usable_share": ("usable_share", 1.0, 0.1, 1.0),
}


def _motor_from_table(name: str, table: Mapping[str, Any], where: str) -> Motor:
    problems = []
    values = {}
    for key, (attr, factor, low, high) in _NUMBERS.items():
        raw = table.get(key)
        if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw):
            problems.append(f"'{key}' must be a number")
        elif not low <= raw <= high:
            problems.append(f"'{key}' = {raw} is outside {low}…{high}")
        else:
            values[attr] = float(raw) * factor
    levels = table.get("levels")
    if (not isinstance(levels, list) or not levels
            or not all(isinstance(x, (int, float)) and 0 < x <= 10 for x in levels)
            or list(levels) != sorted(levels)):
        problems.append("'levels' must be a rising list of assist ratios, e.g. [0.5, 1.0, 2.0]")
    if problems:
        raise VehicleError(f"{where}: motor '{name}':\n  " + "\n  ".join(problems))
    return Motor(name=name, label=str(table.get("label", name)), rule=str(table.get("rule", "")),
                 levels=tuple(float(x) for x in levels), throttle=bool(table.get("throttle", False)),
                 sources=dict(table.get("sources", {})), **values)


def builtin_motors() -> dict[str, Motor]:
    """The built-in envelopes, by name."""
    text = (resources.files("cardgen") / "data" / "motors.toml").read_text(encoding="utf-8")
    return {name: _motor_from_table(name, t, "built-in motors") for name, t in tomllib.loads(text).items()}


def find_motor(name: str) -> Motor:
    """A built-in envelope by name."""
    motors = builtin_motors()
    if name not in motors:
        raise VehicleError(f"unknown motor '{name}'; use one of: {', '.join(motors)}")
    return motors[name]
