"""Benchmark: full plans of the 1,200 km route for five riders, against the route
analysis alone (read, terrain, climbs, descents, cues), in one run.

Target: the five plans add at most 1× the analysis time. Not part of the test run.

    .venv/bin/python bench/bench_plan.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_route import OUT, make_route  # noqa: E402

from cardgen.io.gpx import read_gpx  # noqa: E402
from cardgen.plan import analyse, make_plan  # noqa: E402
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles  # noqa: E402
from cardgen.route.terrain import build_terrain  # noqa: E402

RIDERS = ("road-hoods", "city-upright", "handcycle", "e-assist-cargo", "tandem")


def main() -> None:
    OUT.mkdir(exist_ok=True)
    route = OUT / "long-route.gpx"
    if not route.exists():
        make_route(route)
    lib = builtin_vehicles()
    riders = [Rider.for_vehicle(lib[name]) for name in RIDERS]
    best_analysis = best_plans = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        track = read_gpx(route)
        analysis = analyse(track, build_terrain(track))
        t1 = time.perf_counter()
        plans = [make_plan(analysis, rider=r) for r in riders]
        t2 = time.perf_counter()
        best_analysis = min(best_analysis, t1 - t0)
        best_plans = min(best_plans, t2 - t1)
    print(
        f"route: {track.points:,} points, {analysis.terrain.length / 1000:.0f} km, "
        f"{len(analysis.climbs)} climbs, {len(analysis.descents)} descents"
    )
    print(
        f"analysis: {best_analysis:.2f} s; five plans: {best_plans:.2f} s; "
        f"plans / analysis = {best_plans / best_analysis:.2f}x (target <= 1x)"
    )
    for plan in plans:
        print(f"  {plan.rider.vehicle.name:<15} {plan.totals.time / 3600:6.1f} h")


if __name__ == "__main__":
    main()
