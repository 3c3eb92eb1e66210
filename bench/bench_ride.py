"""Benchmark: the converged ride simulation against the earlier fixed four-pass scan,
on the 1,200 km route for five riders, side by side in one run.

Target (issue: numbers at the edges): the converged simulation costs at most 1.5× the
fixed-pass scan. The fixed-pass scan is kept here only for this comparison: it is
physics.ride._scan with four passes and no cutting of segments, as the earlier code
did. Reports the passes each rider used. Not part of the test run.

    .venv/bin/python bench/bench_ride.py
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_route import OUT, make_route  # noqa: E402

from cardgen.io.gpx import read_gpx  # noqa: E402
from cardgen.physics.braking import BRAKING  # noqa: E402
from cardgen.physics.effort import effort_power  # noqa: E402
from cardgen.physics.ride import _scan, simulate, speed_limit_profile  # noqa: E402
from cardgen.plan import analyse  # noqa: E402
from cardgen.plan.rider import segment_air, speed_caps  # noqa: E402
from cardgen.profiles.motors import find_motor  # noqa: E402
from cardgen.profiles.riders import Rider  # noqa: E402
from cardgen.profiles.vehicles import builtin_vehicles  # noqa: E402
from cardgen.route.terrain import build_terrain  # noqa: E402
from cardgen.settings import Conditions  # noqa: E402

RIDERS = ("road-hoods", "city-upright", "handcycle", "e-assist-cargo", "tandem")


def main() -> None:
    OUT.mkdir(exist_ok=True)
    route = OUT / "long-route.gpx"
    if not route.exists():
        make_route(route)
    track = read_gpx(route)
    analysis = analyse(track, build_terrain(track))
    terrain = analysis.terrain
    air = segment_air(terrain, Conditions())
    on_climb = np.zeros(terrain.grade.size, dtype=bool)
    for c in analysis.climbs:
        on_climb[c.start : c.end] = True
    lib = builtin_vehicles()
    jobs = []
    for name in RIDERS:
        rider = Rider.for_vehicle(lib[name])
        v = rider.vehicle
        power = effort_power(
            flat_power=rider.flat_power,
            climb_power=rider.climb_power_used,
            on_climb=on_climb,
            grade=terrain.grade,
            air=air,
            resistance=v.resistance,
        )
        motor = find_motor(v.motor) if v.motor else None
        ratio = np.full(power.size, motor.levels[0] if motor else 0.0)
        jobs.append((name, v, power, motor, ratio, speed_caps(terrain, rider)))
    best_fixed = best_converged = float("inf")
    passes = {}
    for _ in range(3):
        t0 = time.perf_counter()
        for _, v, power, motor, ratio, caps in jobs:
            rows = dict(
                grade=terrain.grade,
                headwind=air.headwind,
                air_density=air.air_density,
                rider=power,
                ratio=ratio,
                step=np.full(power.size, terrain.step),
                peak=np.full(power.size, motor.peak_power if motor else 0.0),
            )
            _scan(
                rows, v.resistance, motor, speed_limit_profile(terrain.distance, caps, BRAKING), None, 0.0, 4
            )
        t1 = time.perf_counter()
        for name, v, power, motor, ratio, caps in jobs:
            ride = simulate(
                step=terrain.step,
                grade=terrain.grade,
                air=air,
                resistance=v.resistance,
                rider_power=power,
                speed_cap=caps,
                distance=terrain.distance,
                deceleration=BRAKING,
                motor=motor,
                assist_ratio=ratio,
            )
            passes[name] = (ride.passes, ride.converged)
        t2 = time.perf_counter()
        best_fixed, best_converged = min(best_fixed, t1 - t0), min(best_converged, t2 - t1)
    print(f"route: {terrain.length / 1000:.0f} km, {terrain.grade.size:,} segments, five riders")
    print(
        f"fixed 4-pass scan: {best_fixed:.2f} s; converged: {best_converged:.2f} s; "
        f"ratio {best_converged / best_fixed:.2f}x (target <= 1.5x)"
    )
    print(
        "passes used: "
        + ", ".join(f"{n} {p}{'' if ok else ' (not settled)'}" for n, (p, ok) in passes.items())
    )


if __name__ == "__main__":
    main()
