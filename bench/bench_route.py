"""Benchmark: `cardgen route --json` on a 1,200 km route of 120,000 trackpoints.

Compared in the same run, each in a fresh interpreter (best of --repeat runs):
  * a bare ``xml.etree.ElementTree.iterparse`` of the same file into numpy arrays
    (the floor: target cardgen ≤ 1.5× of it);
  * a pipeline built on ``gpxpy.parse`` with per-point Python loops for distance,
    grade and gain (target cardgen ≥ 15× faster);
and cardgen's peak memory (target ≤ 150 MB). Not part of the test run.

    .venv/bin/python bench/bench_route.py [--repeat 3]
"""

from __future__ import annotations

import argparse
import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

OUT = Path(__file__).resolve().parent / "out"
POINTS = 120_000

BARE = """
import sys
from xml.etree.ElementTree import iterparse
import numpy as np
lat, lon, ele = [], [], []
for _, el in iterparse(sys.argv[1]):
    if el.tag.endswith("trkpt"):
        lat.append(el.get("lat")); lon.append(el.get("lon")); ele.append(el[0].text)
        el.clear()
lat = np.array(lat, dtype=float); lon = np.array(lon, dtype=float); ele = np.array(ele, dtype=float)
print(lat.size)
"""

GPXPY = """
import math, sys
import gpxpy
with open(sys.argv[1]) as f:
    g = gpxpy.parse(f)
points = [p for t in g.tracks for s in t.segments for p in s.points]
dist, gain = [0.0], 0.0
for a, b in zip(points, points[1:]):
    p1, p2 = math.radians(a.latitude), math.radians(b.latitude)
    dl = math.radians(b.longitude - a.longitude)
    h = math.sin((p2 - p1) / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    dist.append(dist[-1] + 2 * 6371008.8 * math.asin(math.sqrt(h)))
    if b.elevation > a.elevation:
        gain += b.elevation - a.elevation
grades = [(b.elevation - a.elevation) / max(d2 - d1, 1e-9)
          for a, b, d1, d2 in zip(points, points[1:], dist, dist[1:])]
print(len(points), dist[-1], gain, max(grades))
"""

PEAK = """
import contextlib, io, resource, sys
from cardgen.cli import main
with contextlib.redirect_stdout(io.StringIO()):
    main(["route", sys.argv[1], "--json"])
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def make_route(path: Path, points: int = POINTS) -> None:
    """A winding route of ``points`` × 10 m (1,200 km by default) with rolling hills,
    timestamps and a few waypoints."""
    POINTS = points  # noqa: N806 (the module's constant, for this call)
    rng = np.random.default_rng(42)
    heading = np.cumsum(rng.normal(0.0, 0.03, POINTS))
    x = np.cumsum(10.0 * np.sin(heading))
    y = np.cumsum(10.0 * np.cos(heading))
    s = np.arange(POINTS) * 10.0
    z = 300 + 250 * np.sin(s / 9000.0) + 60 * np.sin(s / 1300.0) + rng.normal(0, 2.0, POINTS)
    lat = -40.5 + np.degrees(y / 6371008.8)
    lon = -140.3 + np.degrees(x / (6371008.8 * math.cos(math.radians(-40.5))))
    t0 = np.datetime64("2026-06-01T06:00:00")
    times = (t0 + (s / 7.0).astype("timedelta64[s]")).astype(str)
    lines = [
        '<?xml version="1.0" encoding="UTF-8"?>',
        '<gpx version="1.1" creator="cardgen bench" xmlns="http://www.topografix.com/GPX/1/1">',
    ]
    for i in range(0, POINTS, 12_000):
        lines.append(f'<wpt lat="{lat[i]:.7f}" lon="{lon[i]:.7f}"><name>Control {i // 12_000}</name></wpt>')
    lines.append("<trk><name>Long synthetic route</name><trkseg>")
    lines += [
        f'<trkpt lat="{a:.7f}" lon="{b:.7f}"><ele>{c:.1f}</ele><time>{t}Z</time></trkpt>'
        for a, b, c, t in zip(lat, lon, z, times, strict=True)
    ]
    lines.append("</trkseg></trk></gpx>")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def best(command: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(command, check=True, stdout=subprocess.DEVNULL)
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    OUT.mkdir(exist_ok=True)
    route = OUT / "long-route.gpx"
    if not route.exists():
        make_route(route)
    py = sys.executable
    cardgen = best([py, "-m", "cardgen", "route", str(route), "--json"], args.repeat)
    bare = best([py, "-c", BARE, str(route)], args.repeat)
    gpxpy_time = best([py, "-c", GPXPY, str(route)], 1)
    peak_kib = int(
        subprocess.run(
            [py, "-c", PEAK, str(route)], check=True, capture_output=True, text=True
        ).stdout.strip()
    )
    size = route.stat().st_size / 2**20
    print(f"route: {POINTS:,} trackpoints, {size:.1f} MiB")
    print(
        f"cardgen route --json: {cardgen:.2f} s; bare iterparse: {bare:.2f} s; "
        f"ratio {cardgen / bare:.2f}x (target <= 1.5x)"
    )
    print(
        f"gpxpy + per-point loops: {gpxpy_time:.2f} s; cardgen is {gpxpy_time / cardgen:.1f}x faster "
        f"(target >= 15x)"
    )
    print(f"cardgen peak memory: {peak_kib / 1024:.0f} MiB (target <= 150 MB)")


if __name__ == "__main__":
    main()
