"""Benchmark: an event of 300 riders on one 160 km route, from a CSV, built with
--jobs 2: wall time and peak memory (resident set of the build process and, apart,
of its largest worker). Target (issue: events at scale): the build's peak memory at
most 1 GB. Not part of the test run.

    .venv/bin/python bench/bench_event.py [--no-pdf]
"""

from __future__ import annotations

import resource
import shutil
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_route import OUT, make_route  # noqa: E402

from cardgen.build import build_site  # noqa: E402
from cardgen.config import load_config  # noqa: E402

RIDERS = 300
VEHICLES = (
    "road-hoods",
    "road-drops",
    "city-upright",
    "tandem",
    "handcycle",
    "trike-recumbent",
    "e-assist-city",
)


def main() -> None:
    pdf = "--no-pdf" not in sys.argv
    folder = OUT / "event"
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    make_route(folder / "sportive-160.gpx", points=16_000)
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib"]
    for i in range(RIDERS):
        cp = 120 + (i * 7) % 180
        rows.append(f"Entrant {i:03d},{VEHICLES[i % len(VEHICLES)]},{cp},{int(cp * 0.7)},{cp},{1000 + i}")
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "site.toml").write_text(
        'riders = "entrants.csv"\n[site]\ntitle = "Invented sportive"\n[event]\nstart = "07:00"\n'
        'start_interval_min = 0.5\n[[routes]]\ngpx = "sportive-160.gpx"\n',
        encoding="utf-8",
    )
    t0 = time.perf_counter()
    report = build_site(load_config(folder / "site.toml"), folder / "site", jobs=2, pdf=pdf)
    wall = time.perf_counter() - t0
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    worker = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"{RIDERS} riders, 160 km, --jobs 2, {'with' if pdf else 'without'} PDFs: {wall:.0f} s wall")
    print(
        f"cards rendered: {report.cards_rendered}; seconds by phase: "
        + ", ".join(f"{k} {v:.1f}" for k, v in report.seconds.items())
    )
    print(
        f"peak resident memory: build process {own:.0f} MiB, largest worker {worker:.0f} MiB "
        f"(target: each at most 1024 MiB)"
    )


if __name__ == "__main__":
    main()
