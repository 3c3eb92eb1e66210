"""Command line: the only place that prints and turns errors into exit codes.

Exit codes: 0 success, 1 the input is wrong (one clear message on stderr), 2 usage.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from cardgen import __version__
from cardgen.errors import CardgenError

#: Limits of the command-line inputs: beyond them the model is not trustworthy.
GRADE_LIMIT_PCT = 50.0
SPEED_LIMIT_KMH = 150.0
POWER_LIMIT_W = 3000.0
WIND_LIMIT_KMH = 150.0


def _ensure(condition: bool, message: str) -> None:
    if not condition:
        raise CardgenError(message)


def _finite(value: float | None, name: str) -> None:
    _ensure(value is None or math.isfinite(value), f"{name} must be a finite number")


def _air_density(args) -> float:
    from cardgen.physics.atmosphere import air_density_isa

    if args.air_density is not None:
        _ensure(0.3 <= args.air_density <= 1.6, f"--air-density {args.air_density} is outside 0.3…1.6 kg/m³")
        return args.air_density
    _ensure(-1000 <= args.altitude <= 9000, f"--altitude {args.altitude} is outside -1000…9000 m")
    return float(air_density_isa(args.altitude))


def _resistance(args):
    """Mass, Crr, CdA, efficiency, bearing flag and a description from the options."""
    explicit = [args.mass, args.crr, args.cda]
    if args.vehicle is not None:
        _ensure(all(v is None for v in explicit), "give either --vehicle or --mass/--crr/--cda, not both")
        from cardgen.vehicles import find_vehicle

        v = find_vehicle(args.vehicle)
        eff = v.efficiency if args.efficiency is None else args.efficiency
        return v.mass, v.crr, v.cda, eff, True, f"{v.label} ({v.name})"
    _ensure(
        all(v is not None for v in explicit),
        "give --vehicle NAME, or all three of --mass KG --crr X --cda M2 (see 'cardgen vehicles')",
    )
    _ensure(20 <= args.mass <= 600, f"--mass {args.mass} kg is outside 20…600 kg (rider + vehicle)")
    _ensure(0 <= args.crr <= 0.1, f"--crr {args.crr} is outside 0…0.1")
    _ensure(0.05 <= args.cda <= 3, f"--cda {args.cda} m² is outside 0.05…3 m²")
    eff = 1.0 if args.efficiency is None else args.efficiency
    return args.mass, args.crr, args.cda, eff, False, "custom vehicle"


def cmd_solve(args) -> int:
    from cardgen.physics.forces import steady_breakdown
    from cardgen.physics.steady import speed_for_power
    from cardgen.units import kmh_to_ms, ms_to_kmh, pct_to_grade

    for name in ("power", "speed", "grade", "headwind", "mass", "crr", "cda", "efficiency",
                 "altitude", "air_density"):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    _ensure(abs(args.grade) <= GRADE_LIMIT_PCT, f"--grade {args.grade} % is outside ±{GRADE_LIMIT_PCT:g} %")
    _ensure(abs(args.headwind) <= WIND_LIMIT_KMH, f"--headwind {args.headwind} km/h is outside ±{WIND_LIMIT_KMH:g} km/h")
    if args.efficiency is not None:
        _ensure(0.5 <= args.efficiency <= 1, f"--efficiency {args.efficiency} is outside 0.5…1")
    mass, crr, cda, eff, bearings, label = _resistance(args)
    rho = _air_density(args)
    grade = float(pct_to_grade(args.grade))
    headwind = float(kmh_to_ms(args.headwind))
    common = dict(mass=mass, crr=crr, cda=cda, efficiency=eff, grade=grade, headwind=headwind,
                  air_density=rho, bearings=bearings)
    if args.power is not None:
        _ensure(abs(args.power) <= POWER_LIMIT_W, f"--power {args.power} W is outside ±{POWER_LIMIT_W:g} W")
        speed = float(speed_for_power(args.power, **common))
        _ensure(math.isfinite(speed), "no steady speed exists for these values; check the inputs")
    else:
        _ensure(0 <= args.speed <= SPEED_LIMIT_KMH, f"--speed {args.speed} km/h is outside 0…{SPEED_LIMIT_KMH:g} km/h")
        speed = float(kmh_to_ms(args.speed))
    parts = steady_breakdown(speed, **common)
    power = float(parts.total) if args.power is None else float(args.power)
    breakdown = {
        "rolling": float(parts.rolling + parts.bearings),
        "aero": float(parts.aero),
        "gravity": float(parts.gravity),
        "drivetrain": float(parts.drivetrain),
    }
    result = {
        "speed_kmh": float(ms_to_kmh(speed)),
        "power_w": power,
        "grade_pct": args.grade,
        "headwind_kmh": args.headwind,
        "air_density_kg_m3": rho,
        "breakdown_w": breakdown,
    }
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    print(f"{label}: {mass:g} kg, CdA {cda:.3f} m², Crr {crr:.4f}, drivetrain {eff * 100:.1f} %")
    wind = "headwind" if args.headwind >= 0 else "tailwind"
    print(f"grade {args.grade:+.1f} %, {wind} {abs(args.headwind):.1f} km/h, air density {rho:.3f} kg/m³")
    print()
    if speed == 0 and args.power is not None:
        print("  speed        0 km/h: this power cannot keep the vehicle moving here")
    else:
        print(f"  speed   {result['speed_kmh']:8.1f} km/h")
    print(f"  power   {power:8.0f} W at the pedals")
    print()
    spent = sum(v for v in breakdown.values() if v > 0)
    print("  term         power   share of power spent")
    for term, value in breakdown.items():
        share = f"{100 * value / spent:5.0f} %" if value > 0 and spent > 0 else "    —"
        note = "  (gives power)" if value < 0 else ""
        print(f"  {term:<10} {value:7.0f} W   {share}{note}")
    if bearings:
        print("\n  rolling includes wheel-bearing friction (Dahn et al. 1991).")
    return 0


def cmd_vehicles(args) -> int:
    from cardgen.units import ms_to_kmh
    from cardgen.vehicles import builtin_vehicles

    library = builtin_vehicles()
    if args.json:
        rows = []
        for v in library.values():
            rows.append({
                "name": v.name, "label": v.label, "wheels": v.wheels, "propulsion": v.propulsion,
                "vehicle_mass_kg": v.vehicle_mass, "rider_mass_kg": v.rider_mass,
                "mass_kg": v.mass, "cda_m2": v.cda, "crr": v.crr, "efficiency": v.efficiency,
                "wheel_inertia_kg": v.wheel_inertia_mass, "gross_efficiency": v.gross_efficiency,
                "typical_power_w": v.typical_power,
                "climb_speed_kmh": float(ms_to_kmh(v.climb_speed)),
                "max_descent_speed_kmh": float(ms_to_kmh(v.max_descent_speed)),
                "curve_accel_m_s2": v.curve_accel, "sources": dict(v.sources),
            })
        print(json.dumps(rows, indent=2))
        return 0
    print(f"{'name':<16} {'wheels':>6} {'mass kg':>8} {'CdA m²':>7} {'Crr':>7} {'drive':>6}  description")
    for v in library.values():
        print(f"{v.name:<16} {v.wheels:>6} {v.mass:>8.0f} {v.cda:>7.2f} {v.crr:>7.4f} "
              f"{v.efficiency * 100:>5.1f}%  {v.label}")
    print("\nmass is vehicle + rider(s). Sources of every value: cardgen vehicles --json")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="cardgen", description="Route power cards and pages from GPX routes.",
    )
    parser.add_argument("--version", action="version", version=f"cardgen {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    solve = sub.add_parser("solve", help="steady power for a speed, or speed for a power",
                           description="Steady power for a speed, or speed for a power.")
    goal = solve.add_mutually_exclusive_group(required=True)
    goal.add_argument("--power", type=float, metavar="W", help="rider power at the pedals")
    goal.add_argument("--speed", type=float, metavar="KMH", help="ground speed")
    solve.add_argument("--grade", type=float, default=0.0, metavar="PCT", help="road grade in %%")
    solve.add_argument("--headwind", type=float, default=0.0, metavar="KMH",
                       help="wind against the direction of travel; negative is a tailwind")
    solve.add_argument("--vehicle", metavar="NAME|FILE", help="built-in vehicle or TOML profile")
    solve.add_argument("--mass", type=float, metavar="KG", help="total mass, rider + vehicle")
    solve.add_argument("--crr", type=float, metavar="X", help="rolling-resistance coefficient")
    solve.add_argument("--cda", type=float, metavar="M2", help="drag area")
    solve.add_argument("--efficiency", type=float, metavar="E",
                       help="drivetrain efficiency (default: the vehicle's; 1.0 with --mass/--crr/--cda)")
    air = solve.add_mutually_exclusive_group()
    air.add_argument("--altitude", type=float, default=0.0, metavar="M",
                     help="altitude for the ISA air density (default 0)")
    air.add_argument("--air-density", type=float, metavar="KGM3", help="air density")
    solve.add_argument("--json", action="store_true", help="print one JSON object")
    solve.set_defaults(run=cmd_solve)

    vehicles = sub.add_parser("vehicles", help="list the built-in vehicles",
                              description="List the built-in vehicles.")
    vehicles.add_argument("--json", action="store_true", help="every value with its source, as JSON")
    vehicles.set_defaults(run=cmd_vehicles)
    return parser


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return args.run(args)
    except CardgenError as exc:
        print(f"cardgen: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("cardgen: interrupted", file=sys.stderr)
        return 130
