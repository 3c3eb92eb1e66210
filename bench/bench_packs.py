"""Benchmark: the print packs' memory. The build's pack step (this tree: the build's
own ``_write_packs``, every pack in one pass over the cards; an earlier commit:
``render_packs``, each route's pack and the event's, with the cover from the theme
and the two-up imposition) on an event of N cards on three routes, copies of real cards (the demo's,
built once with PDFs), by this tree and by an earlier commit side by side in the same
run, each in a fresh interpreter; reports the peak resident memory and CPU seconds
of each. Not part of the test run.

    .venv/bin/python bench/bench_packs.py [--cards 300,1000,3000] [--baseline REV] [--baseline-up-to 1000]

The earlier commit (default: the last one that joined with every card open) runs
only up to ``--baseline-up-to`` cards: it holds every card open, about 2.5 MiB each.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_event import _unpack, run_json  # noqa: E402
from bench_route import OUT  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
#: The last commit whose packs were joined with every card open.
BASELINE = "cafaf8d"

#: Run in a fresh interpreter with the tree to measure on sys.path: joins the cards
#: listed in the file argv[1] into argv[2] (and argv[3], two-up), prints one JSON line.
JOIN = r"""
import json, resource, sys, time
from pathlib import Path
from types import SimpleNamespace

folder, routes = Path(sys.argv[1]), json.loads(Path(sys.argv[2]).read_text())
config = SimpleNamespace(templates=None, units="metric", card_size="A5", large_print=False, title="Invented")
t0 = time.process_time()
written = 0
try:  # this tree: the build's pack step, every file in one pass
    from cardgen.build.pipeline import _write_packs
    from cardgen.render.packs import write_packs
    from cardgen.render.pages import pack_groups
except ImportError:
    made_here = []
else:
    _write_packs(config, pack_groups(config, routes, folder, {slug for slug, _ in routes}), 1, folder)
    made_here = sorted(folder.rglob("all-cards*.pdf"))
for target in made_here:
    written += target.stat().st_size
    target.unlink()
if not made_here:  # the earlier commit: a pass over the cards per pack, each as bytes or streamed
    from cardgen.render.pages import render_packs
    for target, made in render_packs(config, routes, folder, {slug for slug, _ in routes}):
        if callable(made):
            with target.open("wb") as sink:
                made(sink)
        else:
            target.write_bytes(made)
            del made
        written += target.stat().st_size
        target.unlink()
own = resource.getrusage(resource.RUSAGE_SELF)
print(json.dumps({"cpu": time.process_time() - t0, "rss": own.ru_maxrss / 1024, "mb": written / 2**20}))
"""


def _demo_cards() -> list[Path]:
    """The demo's cards (not its coach sheets or packs), built once into bench/out."""
    site = OUT / "packs-demo"
    if not (site / "index.html").is_file():
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        subprocess.run(
            [sys.executable, "-m", "cardgen", "build", str(ROOT / "sample_routes"), "-o", str(site)],
            check=True,
            env=env,
            capture_output=True,
        )
    return sorted(p for p in site.glob("*/*.pdf") if p.stem not in ("coach", "all-cards", "all-cards-2up"))


def _event(count: int, demo: list[Path]) -> Path:
    """An event folder of ``count`` cards on three routes (hard links to the demo's
    cards in turn) and the routes' summaries as the build hands them to the pack step
    (a JSON file beside it)."""
    folder = OUT / f"packs-event-{count}"
    shutil.rmtree(folder, ignore_errors=True)
    routes = []
    for r, slug in enumerate(("route-a", "route-b", "route-c")):
        (folder / slug).mkdir(parents=True)
        rows = []
        for i in range(r, count, 3):
            name = f"entrant-{i:05d}.pdf"
            os.link(demo[i % len(demo)], folder / slug / name)
            rows.append(
                {"name": f"Entrant {i:05d}", "bib": 1000 + i, "start": f"07:{i % 60:02d}", "card": name}
            )
        routes.append((slug, {"name": f"Route {slug[-1].upper()}", "pack": rows}))
    listing = OUT / f"packs-event-{count}.json"
    listing.write_text(json.dumps(routes), encoding="utf-8")
    return listing


def _join(tree: Path, listing: Path) -> dict:
    folder = OUT / listing.stem
    return run_json(JOIN, [str(folder), str(listing)], tree, f"the packs with {tree} failed")


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--cards", default="300,1000,3000")
    parser.add_argument("--baseline", default=BASELINE)
    parser.add_argument("--baseline-up-to", type=int, default=1000)
    args = parser.parse_args()
    demo = _demo_cards()
    old = _unpack(args.baseline)
    print(
        f"the print packs of events of copies of the demo's {len(demo)} cards on three routes "
        "(each route's pack and the event's, with their two-up; each tree in a fresh process)"
    )
    for count in (int(c) for c in args.cards.split(",")):
        listing = _event(count, demo)
        before = _join(old, listing) if count <= args.baseline_up_to else None
        now = _join(ROOT, listing)
        line = f"{count} cards: this tree {now['rss']:.0f} MiB peak, {now['cpu']:.1f} CPU-s, {now['mb']:.0f} MB written"
        if before:
            line += (
                f"; commit {args.baseline} {before['rss']:.0f} MiB, {before['cpu']:.1f} CPU-s, "
                f"{before['mb']:.0f} MB; memory ratio {now['rss'] / before['rss']:.2f}, "
                f"CPU ratio {now['cpu'] / before['cpu']:.2f}"
            )
        print(line, flush=True)
        shutil.rmtree(OUT / listing.stem, ignore_errors=True)


if __name__ == "__main__":
    main()
