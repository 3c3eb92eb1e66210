"""Benchmark: an invented event of 300 riders on three routes (40, 100 and 160 km),
from a CSV, built in full, by this tree and by an earlier commit side by side in the
same run (each in a fresh interpreter, one after the other, --jobs 2), then once more
by this tree after one rider's power changes. Not part of the test run.

Reports, all from one run: wall and CPU seconds of each full build (the CPU of the
build process and all its workers), CPU seconds per card, WeasyPrint layouts per
fitted card (counted by wrapping WeasyPrint's ``HTML.render`` in each build's process
before its workers start, calls made while fitting a card), peak resident memory of
the build process and of its largest worker (target <= 1 GB each), this tree's time
as a share of the earlier commit's (target <= 0.35), the one-rider rebuild as a share
of the full build (target <= 10 %) and the print packs' share (target <= 5 %).

    .venv/bin/python bench/bench_event.py [--riders 300] [--baseline REV | --no-baseline | --old-fitter]
                                          [--no-pdf] [--no-rebuild] [--jobs 2]

``--baseline`` names the commit to compare with (default: the last commit before the
fitter learned variants); it is unpacked with ``git archive`` into bench/out, no
worktree is registered. ``--old-fitter`` compares instead with this very tree running
that commit's fitter (``bench_fitter.halving_fit``, so that later changes elsewhere,
such as slower planning, do not blur the fitter's share). ``--riders 3000 --no-baseline`` measures the scaling.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_route import OUT, make_route  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
#: The last commit whose fitter searched by halving (three layouts per card).
BASELINE = "0f5edd5"
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

#: Run in a fresh interpreter with the tree to measure first on sys.path: builds the
#: site and prints one JSON line of figures.
BUILD = r"""
import json, os, resource, sys, time
from pathlib import Path
import weasyprint
from cardgen.build import build_site
from cardgen.config import load_config

site, out, jobs, pdf, count = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4] == "1", sys.argv[5]
render = weasyprint.HTML.render
FITTING = {"fit", "write_fitting_pdf", "halving_fit", "fits"}  # not "layout": covers and coach sheets go through render.pdf.layout too

def counted(self, *args, **kwargs):
    frame, names = sys._getframe(1), set()
    while frame is not None and len(names) < 5:
        names.add(frame.f_code.co_name)
        frame = frame.f_back
    if names & FITTING:
        fd = os.open(count, os.O_WRONLY | os.O_APPEND | os.O_CREAT)
        os.write(fd, b".")
        os.close(fd)
    return render(self, *args, **kwargs)

weasyprint.HTML.render = counted
if os.environ.get("BENCH_OLD_FITTER"):  # this tree, with the fitter of commit 0f5edd5
    sys.path.insert(0, os.environ["BENCH_OLD_FITTER"])
    from bench_fitter import halving_fit
    from cardgen.build import pipeline
    from cardgen.render.pages import CONTINUATION_STEP
    from cardgen.render.pdf import pdf_bytes

    def old_render_pdfs(cards):
        layouts = 0
        for card in cards:
            card = card.source
            if card.variants:
                data, _, _, made = halving_fit(card.variants, Path(card.base), card.budget, CONTINUATION_STEP)
                layouts += made
            else:
                data, _ = pdf_bytes(card.html, Path(card.base))
            Path(card.target).write_bytes(data)
        return [c.target for c in cards], layouts, {}, {}

    pipeline._render_pdfs = old_render_pdfs
t0 = time.perf_counter()
report = build_site(load_config(Path(site)), Path(out), jobs=jobs, pdf=pdf)
wall = time.perf_counter() - t0
own, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
print(json.dumps({
    "wall": wall,
    "cpu": own.ru_utime + own.ru_stime + kids.ru_utime + kids.ru_stime,
    "rss_own": own.ru_maxrss / 1024, "rss_worker": kids.ru_maxrss / 1024,
    "cards": report.cards_rendered, "reused": report.cards_reused, "seconds": report.seconds,
    "phase_cpu": getattr(report, "cpu", {}),
}))
"""


def _write_riders(folder: Path, riders: int, changed: bool = False) -> None:
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib,routes"]
    names = list(ROUTES)
    for i in range(riders):
        cp = 120 + (i * 7) % 180
        flat = int(cp * 0.7) + (5 if changed and i == riders // 2 else 0)  # one mid-field rider
        rows.append(
            f"Entrant {i:04d},{VEHICLES[i % len(VEHICLES)]},{cp},{flat},{cp},{1000 + i},{names[i % len(names)]}"
        )
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")


def make_event(folder: Path, riders: int) -> Path:
    """The invented event in ``folder`` (emptied first): the three routes, ``riders``
    entrants in a CSV and its ``site.toml`` (returned)."""
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    for name, points in ROUTES.items():
        make_route(folder / f"{name}.gpx", points=points)
    _write_riders(folder, riders)
    site = folder / "site.toml"
    site.write_text(
        'riders = "entrants.csv"\n[site]\ntitle = "Invented sportive"\n[event]\nstart = "07:00"\n'
        "start_interval_min = 0.5\n" + "".join(f'[[routes]]\ngpx = "{n}.gpx"\n' for n in ROUTES),
        encoding="utf-8",
    )
    return site


def _unpack(revision: str) -> Path:
    """The tree of ``revision`` in bench/out (``git archive``: no worktree registered)."""
    tree = OUT / f"tree-{revision}"
    if not (tree / "cardgen").is_dir():
        shutil.rmtree(tree, ignore_errors=True)
        tree.mkdir(parents=True)
        archive = subprocess.run(
            ["git", "-C", str(ROOT), "archive", revision], check=True, capture_output=True
        ).stdout
        subprocess.run(["tar", "-x", "-C", str(tree)], input=archive, check=True)
    return tree


def run_json(code: str, args: list[str], tree: Path, failed: str, env: dict[str, str] | None = None) -> dict:
    """Run ``code`` with ``args`` in a fresh interpreter, in ``tree`` and with it first
    on the path (and ``env`` added), and read the JSON line it prints last; exit with
    ``failed`` and the end of its error output when it fails."""
    done = subprocess.run(
        [sys.executable, "-c", code, *args],
        capture_output=True,
        text=True,
        env={**os.environ, "PYTHONPATH": str(tree), **(env or {})},
        cwd=tree,
    )
    if done.returncode:
        sys.exit(f"{failed}:\n{done.stderr[-3000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def _build(tree: Path, site: Path, out: Path, jobs: int, pdf: bool, old_fitter: bool = False) -> dict:
    count = out.parent / f"{out.name}.layouts"
    count.unlink(missing_ok=True)
    figures = run_json(
        BUILD,
        [str(site), str(out), str(jobs), "1" if pdf else "0", str(count)],
        tree,
        f"the build of {tree} failed",
        {"BENCH_OLD_FITTER": str(Path(__file__).resolve().parent)} if old_fitter else None,
    )
    figures["layouts"] = count.stat().st_size if count.exists() else 0
    fitted = figures["cards"] - len(ROUTES)  # the coach sheets are not fitted
    figures["per_card"] = figures["layouts"] / fitted if fitted > 0 else float("nan")
    return figures


def _phases(f: dict) -> str:
    """A build's phases in wall seconds, then in CPU seconds when it reports them."""
    wall = ", ".join(f"{k} {v:.1f}" for k, v in f["seconds"].items())
    cpu = ", ".join(f"{k} {v:.1f}" for k, v in f["phase_cpu"].items())
    return wall + (f"; phases' CPU {cpu}" if f["phase_cpu"] else "")


def _line(label: str, f: dict, riders: int) -> str:
    return (
        f"{label}: wall {f['wall']:.0f} s, CPU {f['cpu']:.0f} s ({f['cpu'] / riders:.2f} CPU-s per card), "
        f"{f['cards']} cards rendered, layouts per fitted card {f['per_card']:.2f}, "
        f"peak RSS build {f['rss_own']:.0f} MiB, largest worker {f['rss_worker']:.0f} MiB; phases "
        + _phases(f)
    )


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--riders", type=int, default=300)
    parser.add_argument("--baseline", default=BASELINE)
    parser.add_argument("--no-baseline", action="store_true")
    parser.add_argument(
        "--old-fitter",
        action="store_true",
        help="compare with this tree running commit 0f5edd5's fitter (three layouts by halving) instead of "
        "with the baseline commit: isolates the fitter from other changes since",
    )
    parser.add_argument("--no-pdf", action="store_true")
    parser.add_argument(
        "--no-rebuild", action="store_true", help="leave out the one-rider rebuild (for the scaling runs)"
    )
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args()
    pdf = not args.no_pdf
    folder = OUT / f"event-{args.riders}"
    site = make_event(folder, args.riders)
    print(
        f"{args.riders} riders on 40, 100 and 160 km, {'with' if pdf else 'without'} PDFs, --jobs {args.jobs}"
    )
    before = None
    label = f"commit {args.baseline}"
    if args.old_fitter:
        label = "this tree with the old fitter"
        before = _build(ROOT, site, folder / "site-before", args.jobs, pdf, old_fitter=True)
        print(_line(label, before, args.riders))
    elif not args.no_baseline:
        before = _build(_unpack(args.baseline), site, folder / "site-before", args.jobs, pdf)
        print(_line(label, before, args.riders))
    now = _build(ROOT, site, folder / "site", args.jobs, pdf)
    print(_line("this tree", now, args.riders))
    if before:
        print(
            f"this tree / {label}: wall {now['wall'] / before['wall']:.2f}, "
            f"CPU {now['cpu'] / before['cpu']:.2f} (target <= 0.35)"
        )
    packs = now["seconds"].get("packs", 0.0)
    packs_cpu = now["phase_cpu"].get("packs", 0.0)
    print(
        f"print packs: {packs:.1f} s, {packs / now['wall']:.1%} of the build (target <= 5 %); "
        f"CPU {packs_cpu:.1f} s, {packs_cpu / now['cpu']:.1%} of the build's (wall shares move with the "
        "machine's load, CPU shares much less)"
    )
    if not args.no_rebuild:
        _rebuild(site, folder, args, now, pdf)
    own = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"largest process of the whole run: {own:.0f} MiB (target: each at most 1024 MiB)")


def _rebuild(site: Path, folder: Path, args, now: dict, pdf: bool) -> None:
    """The site again after one mid-field rider's power changed."""
    _write_riders(folder, args.riders, changed=True)
    again = _build(ROOT, site, folder / "site", args.jobs, pdf)
    print(
        f"one rider changed: {again['wall']:.1f} s, {again['wall'] / now['wall']:.1%} of the full build "
        f"(target <= 10 %), CPU {again['cpu']:.1f} s, {again['cpu'] / now['cpu']:.1%} of the full build's; "
        f"{again['cards']} cards rendered, {again['reused']} reused; phases " + _phases(again)
    )


if __name__ == "__main__":
    main()
