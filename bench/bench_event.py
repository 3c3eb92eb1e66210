"""Benchmark: an invented event of 300 riders on three routes (40, 100 and 160 km),
from a CSV, built in full with --jobs 1 and with --jobs 2, then again after one
rider's power changes. Reports, all from one run: wall times, the speed-up, the
one-rider rebuild as a share of the full build (target <= 10 %), the print packs'
share of the build (target <= 5 %), and peak memory (resident set of the build
process and of its largest worker; target <= 1 GB). Not part of the test run.

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
ROUTES = {"sportive-40": 4_000, "sportive-100": 10_000, "sportive-160": 16_000}  # points 10 m apart
VEHICLES = (
    "road-hoods",
    "road-drops",
    "city-upright",
    "tandem",
    "handcycle",
    "trike-recumbent",
    "e-assist-city",
)


def _write_riders(folder: Path, changed: bool = False) -> None:
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib,routes"]
    names = list(ROUTES)
    for i in range(RIDERS):
        cp = 120 + (i * 7) % 180
        flat = int(cp * 0.7) + (5 if changed and i == RIDERS // 2 else 0)  # one mid-field rider
        rows.append(
            f"Entrant {i:03d},{VEHICLES[i % len(VEHICLES)]},{cp},{flat},{cp},{1000 + i},{names[i % len(names)]}"
        )
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")


def _peak_mib() -> tuple[float, float]:
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # KiB on Linux
    worker = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    return own, worker


def main() -> None:
    pdf = "--no-pdf" not in sys.argv
    folder = OUT / "event"
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    for name, points in ROUTES.items():
        make_route(folder / f"{name}.gpx", points=points)
    _write_riders(folder)
    (folder / "site.toml").write_text(
        'riders = "entrants.csv"\n[site]\ntitle = "Invented sportive"\n[event]\nstart = "07:00"\n'
        "start_interval_min = 0.5\n" + "".join(f'[[routes]]\ngpx = "{n}.gpx"\n' for n in ROUTES),
        encoding="utf-8",
    )
    walls, reports = {}, {}
    for jobs in (1, 2):
        out = folder / f"site-{jobs}"
        t0 = time.perf_counter()
        reports[jobs] = build_site(load_config(folder / "site.toml"), out, jobs=jobs, pdf=pdf)
        walls[jobs] = time.perf_counter() - t0
    _write_riders(folder, changed=True)
    t0 = time.perf_counter()
    again = build_site(load_config(folder / "site.toml"), folder / "site-2", jobs=2, pdf=pdf)
    rebuild = time.perf_counter() - t0
    own, worker = _peak_mib()
    full = reports[2]
    print(f"{RIDERS} riders on 40, 100 and 160 km, {'with' if pdf else 'without'} PDFs")
    print(
        f"full build: --jobs 1 {walls[1]:.0f} s, --jobs 2 {walls[2]:.0f} s (speed-up {walls[1] / walls[2]:.2f}x)"
    )
    print(
        f"cards rendered {full.cards_rendered}; seconds by phase (--jobs 2): "
        + ", ".join(f"{k} {v:.1f}" for k, v in full.seconds.items())
    )
    packs = full.seconds.get("packs", 0.0)
    print(f"print packs: {packs:.1f} s, {packs / walls[2]:.1%} of the build (target <= 5 %)")
    print(
        f"one rider changed: {rebuild:.1f} s, {rebuild / walls[2]:.1%} of the full build (target <= 10 %); "
        f"{again.cards_rendered} cards rendered, {again.cards_reused} reused"
    )
    print(
        f"peak resident memory: build process {own:.0f} MiB, largest worker {worker:.0f} MiB "
        f"(target: each at most 1024 MiB)"
    )


if __name__ == "__main__":
    main()
