"""Benchmark: the print pack's memory. Joins N copies of real cards (the demo's cards,
built once with PDFs) into a pack and its two-up imposition, by this tree and by an
earlier commit side by side in the same run, each in a fresh interpreter, and
reports the peak resident memory and CPU seconds of each. Not part of the test run.

    .venv/bin/python bench/bench_packs.py [--cards 300,1000,3000] [--baseline REV] [--baseline-up-to 1000]

The earlier commit (default: the last one that joined with every card open) runs
only up to ``--baseline-up-to`` cards: it holds every card open, about 2.5 MiB each.
The cover is a plain table of one row per card (the real cover's template needs a
built site); it is laid out by WeasyPrint in both, as in a build.
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
from bench_event import _unpack  # noqa: E402
from bench_route import OUT  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
#: The last commit whose packs were joined with every card open.
BASELINE = "cafaf8d"

#: Run in a fresh interpreter with the tree to measure on sys.path: joins the cards
#: listed in the file argv[1] into argv[2] (and argv[3], two-up), prints one JSON line.
JOIN = r"""
import io, json, resource, sys, time
from pathlib import Path
from cardgen.render import packs

cards = Path(sys.argv[1]).read_text().split()
entries = [packs.PackEntry(f"Entrant {i}", i, "", "route", Path(c)) for i, c in enumerate(cards)]
def cover(rows):
    return "<table>" + "".join(f"<tr><td>{e.name}</td><td>{first}</td></tr>" for e, first in rows) + "</table>"
t0 = time.process_time()
if hasattr(packs, "write_pack"):
    front, firsts = packs.pack_cover(entries, cover, Path(cards[0]).parent, packs.A5)
    with open(sys.argv[2], "wb") as sink:
        packs.write_pack(front, entries, sink, "all-cards", packs.A5)
    with open(sys.argv[3], "wb") as sink:
        packs.write_two_up(front, entries, sink, "all-cards-2up")
else:
    data, firsts = packs.make_pack(entries, cover, Path(cards[0]).parent, "all-cards", packs.A5)
    Path(sys.argv[2]).write_bytes(data)
    two_up = packs.impose_two_up(data, "all-cards-2up", firsts)
    del data
    Path(sys.argv[3]).write_bytes(two_up)
own = resource.getrusage(resource.RUSAGE_SELF)
print(json.dumps({"cpu": time.process_time() - t0, "rss": own.ru_maxrss / 1024}))
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


def _cards(count: int, demo: list[Path]) -> Path:
    """A list file of ``count`` card files, hard links to the demo's cards in turn."""
    folder = OUT / "packs-cards"
    folder.mkdir(parents=True, exist_ok=True)
    names = []
    for i in range(count):
        target = folder / f"card-{i:05d}.pdf"
        if not target.exists():
            os.link(demo[i % len(demo)], target)
        names.append(str(target))
    listing = OUT / f"packs-{count}.txt"
    listing.write_text("\n".join(names), encoding="utf-8")
    return listing


def _join(tree: Path, listing: Path, tag: str) -> dict:
    pack, two_up = OUT / f"pack-{tag}.pdf", OUT / f"pack-{tag}-2up.pdf"
    done = subprocess.run(
        [sys.executable, "-c", JOIN, str(listing), str(pack), str(two_up)],
        capture_output=True,
        text=True,
        env={**os.environ, "PYTHONPATH": str(tree)},
        cwd=tree,
    )
    if done.returncode:
        sys.exit(f"joining with {tree} failed:\n{done.stderr[-3000:]}")
    figures = json.loads(done.stdout.strip().splitlines()[-1])
    figures["mb"] = (pack.stat().st_size + two_up.stat().st_size) / 2**20
    pack.unlink()
    two_up.unlink()
    return figures


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--cards", default="300,1000,3000")
    parser.add_argument("--baseline", default=BASELINE)
    parser.add_argument("--baseline-up-to", type=int, default=1000)
    args = parser.parse_args()
    demo = _demo_cards()
    old = _unpack(args.baseline)
    print(f"packs of copies of the demo's {len(demo)} cards (pack and two-up, each in a fresh process)")
    for count in (int(c) for c in args.cards.split(",")):
        listing = _cards(count, demo)
        before = _join(old, listing, f"old-{count}") if count <= args.baseline_up_to else None
        now = _join(ROOT, listing, f"new-{count}")
        line = f"{count} cards: this tree {now['rss']:.0f} MiB peak, {now['cpu']:.1f} CPU-s, {now['mb']:.0f} MB written"
        if before:
            line += (
                f"; commit {args.baseline} {before['rss']:.0f} MiB, {before['cpu']:.1f} CPU-s, "
                f"{before['mb']:.0f} MB; memory ratio {now['rss'] / before['rss']:.2f}, "
                f"CPU ratio {now['cpu'] / before['cpu']:.2f}"
            )
        print(line, flush=True)
    shutil.rmtree(OUT / "packs-cards", ignore_errors=True)


if __name__ == "__main__":
    main()
