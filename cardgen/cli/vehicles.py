"""``cardgen vehicles``: the built-in vehicles, as a table or JSON."""

from __future__ import annotations

import argparse
import json

from cardgen.cli.common import _print


def cmd_vehicles(args: argparse.Namespace) -> int:
    from cardgen.profiles.vehicles import builtin_vehicles
    from cardgen.units import ms_to_kmh

    library = builtin_vehicles()
    if args.json:
        rows = []
        for v in library.values():
            rows.append(
                {
                    "name": v.name,
                    "label": v.label,
                    "wheels": v.wheels,
                    "riders": v.riders,
                    "propulsion": v.propulsion,
                    "vehicle_mass_kg": v.vehicle_mass,
                    "rider_mass_kg": v.rider_mass,
                    "mass_kg": v.mass,
                    "cda_m2": v.cda,
                    "crr": v.crr,
                    "efficiency": v.efficiency,
                    "wheel_inertia_kg": v.wheel_inertia_mass,
                    "gross_efficiency": v.gross_efficiency,
                    "typical_power_w": v.typical_power,
                    "climb_speed_kmh": float(ms_to_kmh(v.climb_speed)),
                    "max_descent_speed_kmh": float(ms_to_kmh(v.max_descent_speed)),
                    "curve_accel_m_s2": v.curve_accel,
                    "sources": dict(v.sources),
                }
            )
        print(json.dumps(rows, indent=2))
        return 0
    _print(f"{'name':<16} {'wheels':>6} {'mass kg':>8} {'CdA m²':>7} {'Crr':>7} {'drive':>6}  description")
    for v in library.values():
        _print(
            f"{v.name:<16} {v.wheels:>6} {v.mass:>8.0f} {v.cda:>7.2f} {v.crr:>7.4f} "
            f"{v.efficiency * 100:>5.1f}%  {v.label}"
        )
    _print("\nmass is vehicle + rider(s). Sources of every value: cardgen vehicles --json")
    return 0


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``vehicles`` command's options."""
    vehicles = sub.add_parser(
        "vehicles", help="list the built-in vehicles", description="List the built-in vehicles."
    )
    vehicles.add_argument("--json", action="store_true", help="every value with its source, as JSON")
    vehicles.set_defaults(run=cmd_vehicles)
