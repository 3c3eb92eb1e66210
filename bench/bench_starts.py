"""Benchmark: ``cardgen check`` of a large entry list with start waves (target: 10,000
entrants with waves in under 10 s on one core), and of 200 riders in 5,000 waves.
Each case is timed in a fresh interpreter, with the same case without waves beside
it. Not part of the test run.

    .venv/bin/python bench/bench_starts.py [--entrants 10000]
"""

from __future__ import annotations

import argparse
import resource
import shutil
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_route import OUT, make_route  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent


def _event(folder: Path, entrants: int, waves: int, routes: int = 3) -> Path:
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    names = [f"route-{k}" for k in range(routes)]
    for name in names:
        make_route(folder / f"{name}.gpx", points=2_000)
    rows = ["name,vehicle,cp_w,bib,routes"]
    rows += [
        f"Entrant {i:05d},road-hoods,{150 + i % 100},{i + 1},{names[i % routes]}" for i in range(entrants)
    ]
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    text = 'riders = "entrants.csv"\n[event]\nstart = "07:00"\nstart_interval_min = 0.5\n'
    text += "".join(f'[[routes]]\ngpx = "{n}.gpx"\n' for n in names)
    for w in range(waves):
        if waves == 1:
            text += (
                f'[[waves]]\nname = "All"\nstart = "06:45"\ninterval_min = 0.5\nroutes = {names!r}\n'.replace(
                    "'", '"'
                )
            )
        else:  # one wave per rider, the last ones left to the open start
            text += (
                f'[[waves]]\nname = "W{w}"\nstart = "{6 + w // 3600 % 12:02d}:{w // 60 % 60:02d}"\n'
                f'interval_min = 0.5\nriders = ["Entrant {w % entrants:05d}"]\n'
            )
    (folder / "site.toml").write_text(text, encoding="utf-8")
    return folder / "site.toml"


def _check(site: Path) -> tuple[float, float]:
    """Wall and CPU seconds of ``cardgen check`` in a fresh interpreter."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "cardgen", "check", str(site)], capture_output=True, text=True, cwd=ROOT
    )
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode:
        sys.exit(f"check failed:\n{done.stderr[-2000:]}")
    return wall, (after.ru_utime + after.ru_stime) - (before.ru_utime + before.ru_stime)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--entrants", type=int, default=10_000)
    args = parser.parse_args()
    for entrants, waves in ((args.entrants, 0), (args.entrants, 1), (200, 0), (200, 5_000)):
        site = _event(OUT / f"starts-{entrants}-{waves}", entrants, waves)
        wall, cpu = _check(site)
        target = " (target < 10 s)" if entrants >= 10_000 and waves else ""
        print(f"check, {entrants} entrants, {waves} waves: wall {wall:.1f} s, CPU {cpu:.1f} s{target}")


if __name__ == "__main__":
    main()
