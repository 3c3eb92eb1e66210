"""Benchmark: the elevation fit of `route/profile_fit.py` (straight grades joined at
knots) against the Savitzky–Golay smoothing it replaced, side by side in one run, on
the winding rolling routes of `bench_route.py` (160 km and 1,200 km, 2 m of noise).
CPU seconds of the whole terrain build (resampling, spikes, smoothing, curves) with
each smoothing, best of --repeat runs. No target was set: the figure says what the
fit costs. Not part of the test run.

    .venv/bin/python bench/bench_terrain.py [--repeat 3]
"""

from __future__ import annotations

import argparse
import sys
import time
from functools import partial
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
from bench_route import OUT, make_route  # noqa: E402

from cardgen.io.gpx import read_gpx  # noqa: E402
from cardgen.route import terrain  # noqa: E402
from cardgen.route.profile_fit import ProfileFit  # noqa: E402


# The smoothing as cardgen did it before this change, kept here only for the comparison.
def old_savitzky_golay(values: np.ndarray, points: int = 25, order: int = 2) -> np.ndarray:
    """Savitzky–Golay smoothing over ``points`` samples (Savitzky & Golay 1964), the
    ends from the first and last full window's polynomial."""
    half = points // 2
    offsets = np.arange(-half, half + 1, dtype=float)
    design = offsets[:, None] ** np.arange(order + 1)
    fit = np.linalg.pinv(design)
    out = np.empty_like(values)
    out[half : values.size - half] = np.convolve(values, fit[0][::-1], mode="valid")
    out[:half] = design[:half] @ (fit @ values[:points])
    out[values.size - half :] = design[half + 1 :] @ (fit @ values[-points:])
    return out


def cpu(fn, repeat: int) -> float:
    best = np.inf
    for _ in range(repeat):
        start = time.process_time()
        fn()
        best = min(best, time.process_time() - start)
    return best


def old_smooth(elevation, step, noise):
    """The old smoothing in the place of the fit (no knots)."""
    e = np.asarray(elevation, dtype=float)
    ends = np.array([0.0, e.size - 1.0])
    return ProfileFit(old_savitzky_golay(e, int(round(250.0 / step)) | 1), ends, ends, ends)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    OUT.mkdir(exist_ok=True)
    fit = terrain.fit_profile
    for points in (16_000, 120_000):
        path = OUT / f"terrain-{points}.gpx"
        if not path.exists():
            make_route(path, points)
        track = read_gpx(path)
        build = partial(terrain.build_terrain, track)
        terrain.fit_profile = fit
        new = cpu(build, args.repeat)
        terrain.fit_profile = old_smooth
        old = cpu(build, args.repeat)
        terrain.fit_profile = fit
        print(
            f"{points * 10 / 1000:,.0f} km: terrain build with the fit {new:.3f} CPU-s, "
            f"with Savitzky–Golay {old:.3f} CPU-s: {new / old:.1f}×"
        )


if __name__ == "__main__":
    main()
