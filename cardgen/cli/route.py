"""``cardgen route``: climbs, descents, cues and times of one GPX route."""

from __future__ import annotations

import argparse
import json
import math
import os
from typing import TYPE_CHECKING, Any

from cardgen.cli.common import _finite, _n, _print, _within
from cardgen.errors import CardgenError
from cardgen.profiles.riders import PACING_STYLES
from cardgen.units import J_PER_WH, KMH_PER_MS

if TYPE_CHECKING:
    from cardgen.plan import Plan

#: The short caution of ``cardgen route`` (the cards carry the full ones).
ROUTE_CAUTION = (
    "Model estimates, not guarantees: descent speeds are for the average grade "
    "(steeper pitches go faster), not safe or target speeds. "
    "Check brakes and ride descents and curves to the conditions; local road rules apply; hard "
    "efforts need medical clearance."
)


def _route_plan(args: argparse.Namespace) -> Plan:
    """Read, analyse and plan one route from the ``route`` command's options."""
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import plan_route
    from cardgen.profiles.riders import Rider
    from cardgen.profiles.vehicles import find_vehicle
    from cardgen.settings import Conditions
    from cardgen.units import celsius_to_kelvin, kmh_to_ms

    for name in ("power", "target_speed", "wind", "wind_from", "temperature", "cp", "w_prime"):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    vehicle = find_vehicle(args.vehicle)
    _within("--power", args.power, "route_power_w")
    _within("--cp", args.cp, "cp_w")
    _within("--w-prime", None if args.w_prime is None else args.w_prime / 1000, "w_prime_kj")
    given: dict[str, Any] = {}
    if args.power is not None:
        # a mean over the ride (its help): the pacing style decides the climbs' power,
        # as in a build for a rider with flat_w; setting it as the climbing power too
        # capped every climb at the mean, a constant-power ride under a "best" label
        given["flat_power"] = args.power
    if args.cp is not None:
        given["cp"] = args.cp
    elif args.power is not None:
        _implied_cp(args.power)
    if args.w_prime is not None:
        given["w_prime"] = args.w_prime
    if args.pacing is not None:
        given["pacing"] = args.pacing
    _within("--target-speed", args.target_speed, "target_kmh")
    target = vehicle.climb_speed if args.target_speed is None else float(kmh_to_ms(args.target_speed))
    _within("--wind", args.wind, "wind_kmh")
    _within("--wind-from", args.wind_from, "wind_from_deg")
    temperature = None
    if args.temperature is not None:
        _within("--temperature", args.temperature, "temperature_c")
        temperature = float(celsius_to_kelvin(args.temperature))
    conditions = Conditions(float(kmh_to_ms(args.wind)), math.radians(args.wind_from), temperature)
    rider = Rider.for_vehicle(vehicle, target_speed=target, **given)
    return plan_route(read_gpx(args.gpx), [rider], conditions, where=str(args.gpx)).plans[0]


def _speed(kmh: float | None) -> str:
    """A speed of the JSON (km/h) as the notes and the card print it (to 0.5 km/h)."""
    from cardgen.render import format as fmt

    return fmt.speed(None if kmh is None else kmh / KMH_PER_MS)


def _km(km: float | None) -> str:
    """A distance of the JSON (km) as the card prints it (0.1 km, half up), without
    its unit: one formatter for distances everywhere."""
    from cardgen.render import format as fmt

    return fmt.distance(None if km is None else km * 1000).removesuffix(" km")


def _grade(pct: float | None) -> str:
    """A grade of the JSON (percent) as the notes and the card print it (to 0.5 %)."""
    from cardgen.render import format as fmt

    return fmt.grade(None if pct is None else pct / 100)


def cmd_route(args: argparse.Namespace) -> int:
    from cardgen.render import format as fmt
    from cardgen.render.exports import route_json
    from cardgen.render.format import duration
    from cardgen.render.notices import notice_text

    plan = _route_plan(args)
    if args.trace is not None:
        _write_trace(plan, args.trace)
    data = route_json(plan)
    if args.json:
        print(json.dumps(data, indent=2, ensure_ascii=False))
        return 0
    r, v, t = data["route"], plan.rider.vehicle, data["totals"]
    _print(
        f"{r['name']}: {_km(r['distance_km'])} km, +{_n(r['gain_m'], '.0f')} m / -{_n(r['loss_m'], '.0f')} m"
    )
    rider = plan.rider
    _print(
        f"{v.label} ({v.name}), {v.mass:.0f} kg; CP {rider.cp:.0f} W, W′ {rider.w_prime / 1000:.1f} kJ; "
        f"climb target {rider.target_speed * KMH_PER_MS:.1f} km/h"
    )
    _print_pacing(plan)
    _print()
    if data["climbs"]:
        _print(
            f" #  {'km':>5} {'':<5} {'length':>8} {'gain':>5} {'avg':>6} {'max':>6} {'FIETS':>5} {'band':<10} "
            f"{'W@target':>8} {'km/h':>5} {'time':>5}"
        )
        for i, c in enumerate(data["climbs"], 1):
            _print(
                f"{i:2}  {_km(c['start_km']):>5}-{_km(c['end_km']):<5} {fmt.climb_length(c['length_m']):>8} "
                f"{fmt.height(c['gain_m']):>5} {_grade(c['avg_grade_pct']):>6} {_grade(c['max_grade_pct']):>6} "
                f"{fmt.score(c['score']):>5} {c['band']:<10} {fmt.power(c['power_for_target_w']):>8} "
                f"{_speed(c['speed_at_effort_kmh']).removesuffix(' km/h'):>5} {duration(c['time_s']):>5}"
            )
            if c["rider_difficulty"]:
                _print(f"      {c['band']} by its band; for this rider: {', '.join(c['rider_difficulty'])}")
            if c["assist"] is not None:
                _print(f"      assist: {c['assist']}")
            for w in c["warnings"]:
                _print(f"      ! {w['text']}")
    else:
        _print("No climbs.")
    _print()
    if data["descents"]:
        _print(f" #  {'km':>5} {'':<5} {'drop':>7} {'avg':>7} {'unbraked':>10}   gravity")
        for i, d in enumerate(data["descents"], 1):
            _print(
                f"{i:2}  {_km(d['start_km']):>5}-{_km(d['end_km']):<5} {fmt.height(d['drop_m']):>7} {_grade(d['avg_grade_pct']):>7} "
                f"{_speed(d['coast_speed_kmh']):>10} {_n(d['gravity_power_w'], '6.0f', -1)} W from gravity"
            )
            for w in d["warnings"]:
                _print(f"      ! {w['text']}")
    else:
        _print("No descents.")
    _print()
    # rounded up, as the card prints what the plan draws
    battery = (
        "" if t["battery_wh"] is None else f", battery about {fmt.battery(t['battery_wh'] * J_PER_WH, 'up')}"
    )
    _print(
        f"Moving time {duration(t['time_s'])}, work {_n(t['energy_kj'], '.0f')} kJ, "
        f"energy spent riding about {_n(t['food_kcal'], '.0f')} kcal{battery}"
    )
    turns = sum(1 for c in plan.cues if c.cue.kind == "turn")
    _print(f"{len(plan.cues)} cues ({turns} turns)")
    for w in plan.warnings:
        _print(f"note: {notice_text(w)}")
    _print(f"\n{ROUTE_CAUTION}")
    return 0


def _print_pacing(plan: Plan) -> None:
    """The day's pacing: its style and mean power, and the ride length it assumed."""
    from cardgen.render.format import duration

    e = plan.effort
    if e is None:
        return
    assumed = "" if e.given else f", the default for a ride of about {duration(e.duration or 0.0)}"
    _print(
        f"Pacing: {e.style}, mean {e.mean_power:.0f} W ({e.mean_power / plan.rider.cp:.0%} of CP{assumed})"
    )


def _write_trace(plan: Plan, path: str) -> None:
    """Write the plan's node-by-node trace to ``path``, whole or not at all."""
    from pathlib import Path

    from cardgen.render.exports import trace_csv_text

    target = Path(path)
    temporary = target.with_name(f".{target.name}.cardgen-tmp-{os.getpid()}")
    try:
        temporary.write_text(trace_csv_text(plan), encoding="utf-8")
        os.replace(temporary, target)
    except OSError as exc:
        temporary.unlink(missing_ok=True)
        raise CardgenError(f"{path}: cannot write the trace ({exc.strerror or exc})") from None


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``route`` command's options."""
    route = sub.add_parser(
        "route",
        help="climbs, descents, cues and times of one GPX route",
        description="Climbs, descents, cues and times of one GPX route.",
    )
    route.add_argument("gpx", metavar="ROUTE.gpx")
    route.add_argument(
        "--vehicle",
        default="road-hoods",
        metavar="NAME|FILE",
        help="built-in vehicle or TOML profile (default road-hoods)",
    )
    route.add_argument(
        "--power",
        type=float,
        metavar="W",
        help="the rider's mean power over the ride (default: from the ride's length and the CP)",
    )
    route.add_argument("--cp", type=float, metavar="W", help="the rider's critical power")
    route.add_argument("--w-prime", type=float, metavar="J", help="the rider's W′ (work above CP)")
    route.add_argument(
        "--pacing",
        choices=PACING_STYLES,
        help="best: spend W′ where it saves most time; steady: never above CP "
        "(default: steady on arm-powered vehicles, best on the others)",
    )
    route.add_argument("--trace", metavar="OUT.csv", help="write the plan at every simulation node")
    route.add_argument(
        "--target-speed",
        type=float,
        metavar="KMH",
        help="climbing speed for the watts column (default: the vehicle's)",
    )
    route.add_argument("--wind", type=float, default=0.0, metavar="KMH", help="wind speed")
    route.add_argument(
        "--wind-from",
        type=float,
        default=0.0,
        metavar="DEG",
        help="direction the wind comes from, degrees clockwise from north",
    )
    route.add_argument(
        "--temperature",
        type=float,
        metavar="C",
        help="air temperature (default: standard atmosphere at each altitude)",
    )
    route.add_argument("--json", action="store_true", help="print one JSON object")
    route.set_defaults(run=cmd_route)


def _implied_cp(power: float) -> None:
    """Refuse a ``--power`` whose implied critical power (the power as an all-day
    share of CP) is outside the CP's range, naming the option and the way out."""
    from cardgen.profiles.limits import LIMITS
    from cardgen.profiles.riders import ALL_DAY_SHARE_OF_CP

    implied = power / ALL_DAY_SHARE_OF_CP
    problem = LIMITS["cp_w"].problem(implied)
    if problem:
        raise CardgenError(
            f"--power {power:g} W alone implies a critical power of {implied:.1f} W "
            f"({ALL_DAY_SHARE_OF_CP:.0%} of CP held all day), which {problem.split(' W ', 1)[-1]}; "
            "give the rider's --cp as well"
        )
