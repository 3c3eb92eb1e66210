"""Benchmark: vectorised speed_for_power against scipy.optimize.brentq per segment.

Solves 1,000,000 segments (random grade, wind and power) with cardgen's solver, and a
10,000-segment sample with brentq called once per segment, in the same run; prints
the time per segment of each and their ratio (target ≥ 100×). Two brentq baselines:
around cardgen's own ``power_for_speed`` (the issue's set-up), and around a plain
``math`` residual (the fastest honest scalar loop). Also checks that all give the
same speeds on the sample. Not part of the test run.

    .venv/bin/python bench/bench_solver.py [--segments N]
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np
from scipy.optimize import brentq

from cardgen.physics.forces import BEARING_A, BEARING_B, G0
from cardgen.physics.steady import power_for_speed, speed_for_power

PARAMS = dict(mass=85.0, crr=0.005, cda=0.40, efficiency=0.976, air_density=1.2)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--segments", type=int, default=1_000_000)
    parser.add_argument("--sample", type=int, default=10_000)
    args = parser.parse_args()

    rng = np.random.default_rng(1)
    n = args.segments
    grade = rng.uniform(-0.12, 0.12, n)
    wind = rng.uniform(-8.0, 8.0, n)
    power = rng.uniform(20.0, 400.0, n)

    t0 = time.perf_counter()
    speed = speed_for_power(power, grade=grade, headwind=wind, **PARAMS)
    vector_time = time.perf_counter() - t0

    m = args.sample
    t0 = time.perf_counter()
    reference = np.empty(m)
    for i in range(m):

        def excess(v, i=i):
            return power_for_speed(v, grade=grade[i], headwind=wind[i], **PARAMS) - power[i]

        reference[i] = brentq(excess, 0.0, 200.0, xtol=1e-12)
    loop_time = time.perf_counter() - t0

    mass, crr, cda, eff, rho = (PARAMS[k] for k in ("mass", "crr", "cda", "efficiency", "air_density"))
    t0 = time.perf_counter()
    plain = np.empty(m)
    for i in range(m):
        g, w, target = float(grade[i]), float(wind[i]), float(power[i]) * eff
        cos_a = 1.0 / math.sqrt(1.0 + g * g)
        const = mass * G0 * (crr + g) * cos_a + BEARING_A

        def residual(v, w=w, const=const, target=target):
            air = v + w
            return v * (0.5 * rho * cda * air * abs(air) + const + BEARING_B * v) - target

        plain[i] = brentq(residual, 0.0, 200.0, xtol=1e-12)
    plain_time = time.perf_counter() - t0

    worst = max(np.max(np.abs(speed[:m] - reference)), np.max(np.abs(speed[:m] - plain)))
    per_vector = vector_time / n
    print(f"vectorised: {n:,} segments in {vector_time:.3f} s = {per_vector * 1e9:.0f} ns/segment")
    for name, elapsed in (
        ("brentq on power_for_speed", loop_time),
        ("brentq on a math residual", plain_time),
    ):
        per_loop = elapsed / m
        print(
            f"{name}: {m:,} segments in {elapsed:.3f} s = {per_loop * 1e6:.1f} µs/segment; "
            f"vectorised is {per_loop / per_vector:.0f}x faster per segment (target >= 100x)"
        )
    print(f"largest speed difference on the sample: {worst:.2e} m/s")


if __name__ == "__main__":
    main()
