"""Benchmark: what flushing the new site to disk before publishing costs
(``build/publish.flush_tree``: fsync of every file, then every folder, before the
swap). Two builds, each with --jobs 1: the demo event with its PDF cards, and the
invented 300-rider event of ``bench_event.py`` (``--no-pdf`` by default: its cards
take many minutes; ``--pdf`` to include them). Reports, from one run: the build's
wall time, the flush's, the flush's share of the build, and the files and bytes
flushed. Not part of the test run.

    .venv/bin/python bench/bench_publish.py [--pdf]
"""

from __future__ import annotations

import shutil
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_event import ROUTES, _write_riders  # noqa: E402
from bench_route import OUT, make_route  # noqa: E402

from cardgen.build import build_site  # noqa: E402
from cardgen.build import publish as publish_module  # noqa: E402
from cardgen.config import load_config  # noqa: E402
from cardgen.paths import demo_site  # noqa: E402


def _timed_build(config_path: Path, out: Path, pdf: bool) -> tuple[float, float, int, int]:
    """(build s, flush s, files, bytes) of one full build into a new folder."""
    shutil.rmtree(out, ignore_errors=True)
    flush = publish_module.flush_tree
    spent: list[float] = []
    sizes: list[tuple[int, int]] = []

    def timed(folder: Path) -> None:
        files = [p for p in folder.rglob("*") if p.is_file() and not p.is_symlink()]
        sizes.append((len(files), sum(p.stat().st_size for p in files)))
        t0 = time.perf_counter()
        flush(folder)
        spent.append(time.perf_counter() - t0)

    publish_module.flush_tree = timed
    try:
        t0 = time.perf_counter()
        build_site(load_config(config_path), out, jobs=1, pdf=pdf)
        wall = time.perf_counter() - t0
    finally:
        publish_module.flush_tree = flush
    return wall, spent[0], sizes[0][0], sizes[0][1]


def _event(folder: Path) -> Path:
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    for name, points in ROUTES.items():
        make_route(folder / f"{name}.gpx", points=points)
    _write_riders(folder, 300)
    (folder / "site.toml").write_text(
        'riders = "entrants.csv"\n[site]\ntitle = "Invented sportive"\n[event]\nstart = "07:00"\n'
        "start_interval_min = 0.5\n" + "".join(f'[[routes]]\ngpx = "{n}.gpx"\n' for n in ROUTES),
        encoding="utf-8",
    )
    return folder / "site.toml"


def main() -> None:
    event_pdf = "--pdf" in sys.argv
    runs = [
        ("demo (PDF cards)", demo_site(), OUT / "publish-demo", True),
        (
            f"300 riders ({'PDF cards' if event_pdf else '--no-pdf'})",
            _event(OUT / "publish-event"),
            OUT / "publish-event-site",
            event_pdf,
        ),
    ]
    print(f"{'build':<26} {'wall s':>8} {'flush s':>8} {'share':>7} {'files':>6} {'MiB':>7}")
    for label, config, out, pdf in runs:
        wall, flushed, files, size = _timed_build(config, out, pdf)
        print(f"{label:<26} {wall:8.2f} {flushed:8.3f} {flushed / wall:7.1%} {files:6d} {size / 2**20:7.1f}")


if __name__ == "__main__":
    main()
