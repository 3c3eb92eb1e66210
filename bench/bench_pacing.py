"""Benchmark: the pacing plan. Not part of the test run.

1. Planning time per rider-route on a 160 km route, as a ratio to one dynamic
   simulation of the same route (target: under 5 s on one core).
2. The gain table: on the test's own routes (tests/test_pacing_reference.py), for a
   road rider, an upright rider and a handcyclist, the moving time at constant power,
   with the earlier heuristic (flat power, CP on climbs, coasting where gravity holds
   the flat speed), with the pacing plan and with the independent optimum, all ridden
   by the test's solve_ivp model at the plan's own mean power.
3. An event's planning, 300 riders on 40, 100 and 160 km (the rider mix of
   bench_event.py), with the pacing plan and with the earlier heuristic, side by side
   (target: within 2×), in wall and CPU seconds (the CPU ratio is the steadier on a
   shared machine).
4. The same riders planned by this tree and by the code before the pacing plan
   (commit 0f5edd5, bench_event.py's baseline), each in a process of its own, side by
   side, twice: the event's planning as organisers saw it before, against now. Part
   3's heuristic runs on today's physics, which has grown faster since, so its ratio
   is the stricter one: the pacing plan's own cost over one heuristic ride.

    .venv/bin/python bench/bench_pacing.py [--riders 300] [--skip-event] [--baseline REV]
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))
from bench_route import OUT, make_route  # noqa: E402

from cardgen.io.gpx import read_gpx  # noqa: E402
from cardgen.physics.effort import effort_power  # noqa: E402
from cardgen.plan import analyse, make_plan  # noqa: E402
from cardgen.plan import rider as plan_rider  # noqa: E402
from cardgen.plan.assist_levels import assist_ratio  # noqa: E402
from cardgen.plan.model import Effort  # noqa: E402
from cardgen.plan.pacing import Course, ceiling, pace, ridden_mean  # noqa: E402
from cardgen.plan.rider import segment_air  # noqa: E402
from cardgen.profiles.riders import Rider  # noqa: E402
from cardgen.profiles.vehicles import builtin_vehicles  # noqa: E402
from cardgen.route.terrain import build_terrain  # noqa: E402
from cardgen.settings import Conditions  # noqa: E402

RIDERS = {
    "road": ("road-hoods", 250.0),
    "upright": ("city-upright", 160.0),
    "handcycle": ("handcycle", 110.0),
}


def _course(analysis, rider, conditions=None):
    """The course as the plan builds it (no motor), in still air by default."""
    terrain = analysis.terrain
    return plan_rider._course(terrain, rider, segment_air(terrain, conditions or Conditions()), None, None)


def _heuristic(analysis, course, rider, flat):
    """The earlier effort model: flat power, the climbing power on climbs, coasting
    where gravity alone holds the flat speed."""
    on_climb = np.zeros(course.grade.size, dtype=bool)
    for c in analysis.climbs:
        on_climb[c.start : c.end] = True
    return effort_power(
        flat_power=flat,
        climb_power=rider.climb_power_used,
        on_climb=on_climb,
        grade=course.grade,
        air=course.air,
        resistance=rider.vehicle.resistance,
    )


def planning_time() -> None:
    OUT.mkdir(exist_ok=True)
    route = OUT / "sportive-160.gpx"
    if not route.exists():
        make_route(route, points=16_000)
    track = read_gpx(route)
    analysis = analyse(track, build_terrain(track))
    lib = builtin_vehicles()
    print(f"1. planning on {analysis.terrain.length / 1000:.0f} km ({analysis.terrain.grade.size} segments)")
    for label, (name, cp) in RIDERS.items():
        rider = Rider.for_vehicle(lib[name], cp=cp, flat_power=0.7 * cp, pacing="best")
        course = _course(analysis, rider)
        t0 = time.perf_counter()
        course.ride(np.full(course.grade.size, 0.7 * cp))
        t1 = time.perf_counter()
        pace(course, mean_power=0.7 * cp, cp=cp, w_prime=rider.w_prime, top=ceiling("best", cp, 0.1))
        t2 = time.perf_counter()
        print(
            f"   {label:<10} plan {t2 - t1:5.2f} s, one simulation {t1 - t0:5.3f} s, "
            f"ratio {(t2 - t1) / (t1 - t0):6.1f}x (target: plan under 5 s)"
        )


def gain_table() -> None:
    import test_pacing_reference as ref
    from gpxmaker import profile_gpx

    lib = builtin_vehicles()
    print("\n2. moving time [s] at the same mean power, ridden by the test's solve_ivp model")
    print(
        "   route               rider      mean W  constant  heuristic  plan    optimum  plan's share  heuristic's"
    )
    for route, (make, _) in ref.ROUTES.items():
        s, z, wind = make()
        track = read_gpx(profile_gpx(OUT / f"pacing-{route}.gpx", s, z))
        analysis = analyse(track, build_terrain(track))
        terrain = analysis.terrain
        for label, (name, cp) in RIDERS.items():
            vehicle = lib[name]
            rider = Rider.for_vehicle(vehicle, cp=cp, flat_power=ref.MEAN_SHARE * cp, pacing="best")
            course = _course(analysis, rider)
            headwind = np.interp(terrain.distance[:-1], s[:-1], wind)
            course = Course(
                **{**course.__dict__, "headwind": headwind, "air_density": np.full(headwind.size, 1.2)}
            )
            model = ref.Model(vehicle)
            top = ceiling("best", cp, 0.1)
            plan = pace(
                course, mean_power=ref.MEAN_SHARE * cp, cp=cp, w_prime=rider.w_prime, top=top
            ).pacing.power
            args = (terrain.distance, course.grade, headwind)
            t_plan, mean, _ = model.ride(*args, plan, cp, rider.w_prime)
            t_const, _, _ = model.ride(*args, np.full(plan.size, mean), cp, rider.w_prime)
            # the heuristic's flat power for the same mean, by bisection on our simulation
            lo, hi = 0.2 * mean, min(cp, 2 * mean)
            for _ in range(30):
                flat = 0.5 * (lo + hi)
                ridden = ridden_mean(course.ride(_heuristic(analysis, course, rider, flat)))
                lo, hi = (flat, hi) if ridden < mean else (lo, flat)
            t_old, m_old, _ = model.ride(*args, _heuristic(analysis, course, rider, flat), cp, rider.w_prime)
            # the optimum at the plan's mean as ridden: two tries, then linear in the mean
            tries, asked = [], mean
            for _ in range(2):
                best = ref.reference_optimum(model, *args, cp, rider.w_prime, top, asked)
                t_ref, m_ref, _ = model.ride(*args, best, cp, rider.w_prime)
                tries.append((m_ref, t_ref))
                asked *= mean / m_ref
            (m1, t1), (m2, t2) = tries
            t_ref = t2 if abs(m2 - m1) < 1e-6 else t1 + (t2 - t1) * (mean - m1) / (m2 - m1)
            m_ref = mean
            gain = t_const - min(t_ref, t_plan)
            print(
                f"   {route:<19} {label:<10} {mean:6.1f}  {t_const:8.0f}  {t_old:8.0f}  {t_plan:7.0f} {t_ref:8.0f}"
                f"  {(t_const - t_plan) / gain:10.0%}  {(t_const - t_old) / gain:10.0%}"
                f"   (heuristic mean {m_old:.1f} W; optimum interpolated to {m_ref:.1f} W)"
            )


def _old_paced(course, rider, stretches=()):
    """The earlier plan, for the side-by-side timing (reconstructed here, labelled
    "heuristic"): the heuristic ridden once, with a motor at the levels each stretch
    asks for (the earlier code chose them before the ride, without the pacing plan)."""
    analysis = _old_paced.analysis
    levels = [s.wanted for s in stretches]
    if stretches and course.motor is not None:
        course = dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, levels))
    ride = course.ride(_heuristic(analysis, course, rider, rider.flat_power))
    effort = Effort("heuristic", ridden_mean(ride), rider.flat_power, rider.climb_power_used)
    return effort, ride, levels


def event_planning(riders: int) -> None:
    import bench_event

    lib = builtin_vehicles()
    analyses = {}
    for name, points in bench_event.ROUTES.items():
        path = OUT / f"{name}.gpx"
        if not path.exists():
            make_route(path, points=points)
        track = read_gpx(path)
        analyses[name] = analyse(track, build_terrain(track))
    entrants = []
    names = list(bench_event.ROUTES)
    for i in range(riders):
        cp = 120 + (i * 7) % 180
        vehicle = lib[bench_event.VEHICLES[i % len(bench_event.VEHICLES)]]
        entrants.append((names[i % len(names)], Rider.for_vehicle(vehicle, cp=cp, flat_power=int(cp * 0.7))))
    new_paced = plan_rider._paced
    timings, cpu = {}, {}
    for label in ("heuristic", "pacing plan"):
        t0, c0 = time.perf_counter(), time.process_time()
        for route, rider in entrants:
            if label == "heuristic":
                _old_paced.analysis = analyses[route]
                plan_rider._paced = _old_paced
            make_plan(analyses[route], rider=rider)
            plan_rider._paced = new_paced
        timings[label] = time.perf_counter() - t0
        cpu[label] = time.process_time() - c0
    ratio = timings["pacing plan"] / timings["heuristic"]
    print(
        f"\n3. {riders} riders' plans on 40/100/160 km: heuristic {timings['heuristic']:.1f} s, "
        f"pacing plan {timings['pacing plan']:.1f} s, ratio {ratio:.2f}x (target <= 2x); CPU "
        f"{cpu['heuristic']:.1f} and {cpu['pacing plan']:.1f} s, ratio {cpu['pacing plan'] / cpu['heuristic']:.2f}x"
    )


#: Plans bench_event.py's riders with the cardgen on PYTHONPATH (this tree or an
#: earlier commit's, whose GPX reader lived in cardgen.route) and prints its CPU and
#: wall seconds, the routes' analyses left out.
PLAN_EVENT = """
import json, sys, time
from pathlib import Path
sys.path.insert(0, sys.argv[1])
import bench_event
try:
    from cardgen.io.gpx import read_gpx
except ImportError:
    from cardgen.route.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain
lib = builtin_vehicles()
names = list(bench_event.ROUTES)
analyses = {}
for name in names:
    track = read_gpx(Path(sys.argv[2]) / f"{name}.gpx")
    analyses[name] = analyse(track, build_terrain(track))
entrants = []
for i in range(int(sys.argv[3])):
    cp = 120 + (i * 7) % 180
    vehicle = lib[bench_event.VEHICLES[i % len(bench_event.VEHICLES)]]
    entrants.append((names[i % len(names)], Rider.for_vehicle(vehicle, cp=cp, flat_power=int(cp * 0.7))))
t0, c0 = time.perf_counter(), time.process_time()
for route, rider in entrants:
    make_plan(analyses[route], rider=rider)
print(json.dumps({"wall": time.perf_counter() - t0, "cpu": time.process_time() - c0}))
"""


def against_baseline(riders: int, revision: str) -> None:
    import json
    import os
    import subprocess

    import bench_event

    for name, points in bench_event.ROUTES.items():
        if not (OUT / f"{name}.gpx").exists():
            make_route(OUT / f"{name}.gpx", points=points)
    trees = {revision: bench_event._unpack(revision), "this tree": HERE.parent}
    seen: dict[str, list[dict]] = {label: [] for label in trees}
    for _ in range(2):
        for label, tree in trees.items():
            done = subprocess.run(
                [sys.executable, "-c", PLAN_EVENT, str(HERE), str(OUT), str(riders)],
                capture_output=True,
                text=True,
                env={**os.environ, "PYTHONPATH": str(tree)},
                cwd=tree,
                check=True,
            )
            seen[label].append(json.loads(done.stdout.strip().splitlines()[-1]))
    old, new = (min(seen[label], key=lambda f: f["cpu"]) for label in trees)
    print(
        f"\n4. {riders} riders' plans, commit {revision} against this tree, side by side (least of two "
        f"runs each): CPU {old['cpu']:.1f} and {new['cpu']:.1f} s, ratio {new['cpu'] / old['cpu']:.2f}x "
        f"(target <= 2x); wall {old['wall']:.1f} and {new['wall']:.1f} s, ratio {new['wall'] / old['wall']:.2f}x"
    )


def main() -> None:
    import bench_event

    parser = argparse.ArgumentParser()
    parser.add_argument("--riders", type=int, default=300)
    parser.add_argument("--baseline", default=bench_event.BASELINE)
    parser.add_argument("--skip-event", action="store_true")
    parser.add_argument("--skip-table", action="store_true")
    args = parser.parse_args()
    planning_time()
    if not args.skip_table:
        gain_table()
    if not args.skip_event:
        event_planning(args.riders)
        against_baseline(args.riders, args.baseline)


if __name__ == "__main__":
    main()
