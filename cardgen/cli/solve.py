"""``cardgen solve``: steady power for a speed, or speed for a power."""

from __future__ import annotations

import argparse
import json
import math
from typing import Any

from cardgen.cli.common import _ensure, _finite, _print, _ranged, _within

#: Above this speed a result says it is outside what the model (and any rider) covers:
#: the descent speed caps of the vehicle library stop near 60 km/h (common practice,
#: no published source).
PLAUSIBLE_SPEED_KMH = 100.0


def _air_density(args: argparse.Namespace) -> tuple[float | None, float]:
    """The air density given (or None) and the altitude for the standard atmosphere."""
    if args.air_density is not None:
        _within("--air-density", args.air_density, "air_density_kg_m3")
        return args.air_density, 0.0
    _within("--altitude", args.altitude, "altitude_m")
    return None, args.altitude


def _resistance(args: argparse.Namespace) -> tuple[float, float, float, float, bool, str]:
    """Mass, Crr, CdA, efficiency, bearing flag and a description from the options."""
    explicit = [args.mass, args.crr, args.cda]
    if args.vehicle is not None:
        _ensure(all(v is None for v in explicit), "give either --vehicle or --mass/--crr/--cda, not both")
        from cardgen.profiles.vehicles import find_vehicle

        v = find_vehicle(args.vehicle)
        eff = v.efficiency if args.efficiency is None else args.efficiency
        return v.mass, v.crr, v.cda, eff, True, f"{v.label} ({v.name})"
    _ensure(
        all(v is not None for v in explicit),
        "give --vehicle NAME, or all three of --mass KG --crr X --cda M2 (see 'cardgen vehicles')",
    )
    _within("--mass", args.mass, "mass_kg")
    _within("--crr", args.crr, "crr")
    _within("--cda", args.cda, "cda_m2")
    eff = 1.0 if args.efficiency is None else args.efficiency
    return args.mass, args.crr, args.cda, eff, False, "custom vehicle"


def _solve_motor(args: argparse.Namespace) -> tuple[Any, float]:
    """The vehicle's motor (with the vehicle's battery) and the assist ratio asked for
    (None, 0 without a motor)."""
    from cardgen.profiles.vehicles import find_vehicle

    vehicle = find_vehicle(args.vehicle) if args.vehicle is not None else None
    motor = vehicle.fitted_motor() if vehicle is not None else None
    if motor is None:
        _ensure(
            args.assist_level is None,
            "--assist-level needs a --vehicle with a motor (see 'cardgen vehicles')",
        )
        return None, 0.0
    level = args.assist_level or 0
    _ensure(
        0 <= level <= len(motor.levels),
        f"--assist-level {level} is outside 0…{len(motor.levels)} for this motor",
    )
    return motor, (0.0 if level == 0 else motor.levels[level - 1])


def cmd_solve(args: argparse.Namespace) -> int:
    from cardgen.plan.steady import steady_state
    from cardgen.units import kmh_to_ms, ms_to_kmh, pct_to_grade

    for name in (
        "power",
        "speed",
        "grade",
        "headwind",
        "mass",
        "crr",
        "cda",
        "efficiency",
        "altitude",
        "air_density",
    ):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    _within("--grade", args.grade, "grade_pct")
    _within("--headwind", args.headwind, "headwind_kmh")
    _within("--efficiency", args.efficiency, "efficiency")
    mass, crr, cda, eff, bearings, label = _resistance(args)
    air_density, altitude = _air_density(args)
    motor, ratio = _solve_motor(args)
    if args.power is not None:
        _within("--power", args.power, "power_w")
    else:
        _within("--speed", args.speed, "speed_kmh")
    state = steady_state(
        mass=mass,
        crr=crr,
        cda=cda,
        efficiency=eff,
        bearings=bearings,
        grade=float(pct_to_grade(args.grade)),
        headwind=float(kmh_to_ms(args.headwind)),
        air_density=air_density,
        altitude=altitude,
        power=args.power,
        speed=None if args.speed is None else float(kmh_to_ms(args.speed)),
        motor=motor,
        ratio=ratio,
    )
    _ensure(math.isfinite(state.speed), "no steady speed exists for these values; check the inputs")
    speed, power, motor_w, air_density = state.speed, state.power, state.motor_power, state.air_density
    breakdown = {
        "rolling": state.rolling,
        "aero": state.aero,
        "gravity": state.gravity,
        "drivetrain": state.drivetrain,
    }
    result = {
        "speed_kmh": float(ms_to_kmh(speed)),
        "power_w": power,
        "grade_pct": args.grade,
        "headwind_kmh": args.headwind,
        "air_density_kg_m3": air_density,
        "breakdown_w": breakdown,
    }
    if motor is not None:
        result["assist_level"] = args.assist_level or 0
        result["motor_w"] = motor_w
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    _print_solve(
        args, result, label, (mass, cda, crr, eff), air_density, speed, power, motor, motor_w, bearings
    )
    return 0


#: The short caution of ``cardgen solve`` (the cards carry the full ones).
SOLVE_CAUTION = (
    "Model estimate, not a guarantee: a speed here is an upper bound from the power balance, "
    "not a safe or target speed; ride to the conditions and the local rules."
)


def _print_solve(
    args: argparse.Namespace,
    result: dict[str, Any],
    label: str,
    vehicle: tuple[float, float, float, float],
    air_density: float,
    speed: float,
    power: float,
    motor: Any,
    motor_w: float,
    bearings: bool,
) -> None:
    """The solve command's words for a person."""
    mass, cda, crr, eff = vehicle
    breakdown = result["breakdown_w"]
    _print(f"{label}: {mass:g} kg, CdA {cda:.3f} m², Crr {crr:.4f}, drivetrain {eff * 100:.1f} %")
    wind = "headwind" if args.headwind >= 0 else "tailwind"
    _print(
        f"grade {args.grade:+.1f} %, {wind} {abs(args.headwind):.1f} km/h, air density {air_density:.3f} kg/m³"
    )
    _print()
    if speed == 0 and args.power is not None:
        _print("  speed        0 km/h: this power cannot keep the vehicle moving here")
    else:
        _print(f"  speed   {result['speed_kmh']:8.1f} km/h")
        if result["speed_kmh"] > PLAUSIBLE_SPEED_KMH:
            _print(
                f"  note: bicycles are not ridden above {PLAUSIBLE_SPEED_KMH:.0f} km/h, and air and tyres "
                "stop behaving as the model assumes there; check the inputs"
            )
    _print(f"  power   {power:8.0f} W at the pedals")
    if motor is not None:
        if motor_w > 0 or (args.assist_level or 0) > 0:
            _print(f"  motor   {motor_w:8.0f} W at the wheel ({motor.level_name(args.assist_level)})")
        else:
            _print(f"  motor is off: give --assist-level 1…{len(motor.levels)} to ride with assistance")
    _print()
    spent = sum(v for v in breakdown.values() if v > 0)
    _print("  term         power   share of power spent")
    for term, value in breakdown.items():
        share = f"{100 * value / spent:5.0f} %" if value > 0 and spent > 0 else "    —"
        note = "  (gives power)" if value < 0 else ""
        _print(f"  {term:<10} {value:7.0f} W   {share}{note}")
    if bearings:
        _print("\n  rolling includes wheel-bearing friction (Dahn et al. 1991).")
    _print(f"\n{SOLVE_CAUTION}")


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``solve`` command's options."""
    solve = sub.add_parser(
        "solve",
        help="steady power for a speed, or speed for a power",
        description="Steady power for a speed, or speed for a power.",
    )
    goal = solve.add_mutually_exclusive_group(required=True)
    goal.add_argument("--power", type=float, metavar="W", help="rider power at the pedals")
    goal.add_argument("--speed", type=float, metavar="KMH", help="ground speed")
    solve.add_argument("--grade", type=float, default=0.0, metavar="PCT", help="road grade in %%")
    solve.add_argument(
        "--headwind",
        type=float,
        default=0.0,
        metavar="KMH",
        help="wind against the direction of travel; negative is a tailwind",
    )
    solve.add_argument("--vehicle", metavar="NAME|FILE", help="built-in vehicle or TOML profile")
    solve.add_argument("--mass", type=float, metavar="KG", help="total mass, rider + vehicle")
    solve.add_argument("--crr", type=float, metavar="X", help="rolling-resistance coefficient")
    solve.add_argument("--cda", type=float, metavar="M2", help="drag area")
    solve.add_argument(
        "--efficiency",
        type=float,
        metavar="E",
        help="drivetrain efficiency (default: the vehicle's; 1.0 with --mass/--crr/--cda)",
    )
    air = solve.add_mutually_exclusive_group()
    air.add_argument(
        "--altitude",
        type=float,
        default=0.0,
        metavar="M",
        help="altitude for the ISA air density (default 0)",
    )
    air.add_argument("--air-density", type=float, metavar="KGM3", help="air density")
    solve.add_argument(
        "--assist-level",
        type=_ranged(0, 10, "0: motor off"),
        metavar="N",
        help="e-assist vehicles: the assist level (default 0, the motor off)",
    )
    solve.add_argument("--json", action="store_true", help="print one JSON object")
    solve.set_defaults(run=cmd_solve)
