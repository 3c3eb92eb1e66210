"""Benchmark: how low the CPU of ``bench_event.py``'s 300-rider build could go with
today's cards and WeasyPrint, against the baseline commit's full build, both
measured in the same run. Not part of the test run.

The floor is this tree's build as it would be with a fitter that never lays out a
card twice: every fitted card laid out and written exactly once, from the variant the
fitter chose (measured again in the same worker process, with the same image cache,
right after the fitter made it); the coach sheets, which are laid out once (a part
at a time when long) anyway, as they were; the planning, the print packs and the pages as the same
build measured them. A second floor takes the cards' drawings (the profile and the
map, the same on every card of a route) as costing nothing: each card laid out and
written once more with every drawing served as an empty image of the same size.

    .venv/bin/python bench/bench_floor.py [--riders 300] [--baseline REV] [--jobs 2]

Prints both floors as shares of the baseline's CPU: a share above a CPU target says
that neither a better fitter nor cheaper drawings can meet it; only less to lay out
and write, or a faster renderer, can.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_event import BASELINE, OUT, ROOT, _build, _unpack, make_event, run_json  # noqa: E402

#: Run in a fresh interpreter with this tree on sys.path: builds the site with the
#: measuring wrappers in place (set before the workers fork, so they run there) and
#: prints one JSON line of the build's phases.
FLOOR = r"""
import json, os, re, sys, time
from pathlib import Path
from weasyprint.urls import URLFetcherResponse
from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.render import pdf

site, out, jobs, log = sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4]
SVG = re.compile(rb"<svg\b[^>]*>", re.S)

def note(line):
    fd = os.open(log, os.O_WRONLY | os.O_APPEND | os.O_CREAT)
    os.write(fd, (line + "\n").encode())
    os.close(fd)

class Blank(pdf._fetcher_class()):
    # every drawing served as an empty one of the same size (its root element alone)
    def fetch(self, url, headers=None):
        response = super().fetch(url, headers)
        if not url.endswith(".svg"):
            return response
        data = response.read()
        return URLFetcherResponse(url, SVG.search(data).group(0) + b"</svg>", {"Content-Type": "image/svg+xml"}, 200)

def once(html, base, cache, fetcher):
    start = time.process_time()
    with pdf._quiet_collector():
        pdf.written(pdf.layout(html, base, cache, fetcher), cache)
    return time.process_time() - start

fit, blank_cache = pdf.Fitter.fit, {}

def measured_fit(self, variants, base, *args, **kwargs):
    data, index, pages = fit(self, variants, base, *args, **kwargs)
    real = once(variants[index], base, self.cache, pdf.build_only_fetcher(base))
    empty = once(variants[index], base, blank_cache, Blank(base))
    note(f"card {real} {empty}")
    return data, index, pages

whole = pdf.pdf_bytes

MAIN = os.getpid()

def measured_whole(html, base):  # the coach sheets (whole, or a part at a time)
    start = time.process_time()
    made = whole(html, base)
    if os.getpid() != MAIN:  # in this process: the day sheet, counted in the build's "other"
        note(f"sheet {time.process_time() - start}")
    return made

pdf.Fitter.fit = measured_fit
pdf.pdf_bytes = measured_whole
report = build_site(load_config(Path(site)), Path(out), jobs=jobs, pdf=True)
print(json.dumps({"phase_cpu": report.cpu, "cards": report.cards_rendered}))
"""


def _floor(site: Path, out: Path, jobs: int) -> dict:
    """This tree's build with the measuring wrappers: its phases' CPU and the sums of
    the once-only card and coach-part costs."""
    log = out.parent / f"{out.name}.floor"
    log.unlink(missing_ok=True)
    figures = run_json(FLOOR, [str(site), str(out), str(jobs), str(log)], ROOT, "the floor build failed")
    lines = log.read_text().splitlines()
    cards = [line.split()[1:] for line in lines if line.startswith("card ")]
    sheets = [float(line.split()[1]) for line in lines if line.startswith("sheet ")]
    figures["fitted"] = len(cards)
    figures["once"] = sum(float(real) for real, _ in cards)
    figures["once_blank"] = sum(float(empty) for _, empty in cards)
    figures["sheets"] = len(sheets)
    figures["coach"] = sum(sheets)
    return figures


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--riders", type=int, default=300)
    parser.add_argument("--baseline", default=BASELINE)
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args()
    folder = OUT / f"floor-{args.riders}"
    site = make_event(folder, args.riders)
    print(f"{args.riders} riders on 40, 100 and 160 km, with PDFs, --jobs {args.jobs}")
    before = _build(_unpack(args.baseline), site, folder / "site-before", args.jobs, True)
    print(f"commit {args.baseline}: CPU {before['cpu']:.0f} s (full build)")
    f = _floor(site, folder / "site", args.jobs)
    cpu = f["phase_cpu"]
    rest = cpu["total"] - cpu["plan"] - cpu["pdf"] - cpu.get("packs", 0.0)  # pages, index, day sheet
    fixed = cpu["plan"] + cpu.get("packs", 0.0) + rest + f["coach"]
    print(
        f"this tree, phases' CPU: plan {cpu['plan']:.1f} s, packs {cpu.get('packs', 0.0):.1f} s, "
        f"other {rest:.1f} s; coach sheets {f['coach']:.1f} s in {f['sheets']} layouts; "
        f"{f['fitted']} fitted cards laid out and written once: {f['once']:.1f} s "
        f"({f['once'] / f['fitted']:.3f} s a card), with empty drawings {f['once_blank']:.1f} s "
        f"({f['once_blank'] / f['fitted']:.3f} s a card)"
    )
    for label, cards in (("one layout per card", f["once"]), ("and drawings free", f["once_blank"])):
        total = fixed + cards
        print(f"floor, {label}: CPU {total:.0f} s, {total / before['cpu']:.2f} of commit {args.baseline}'s")


if __name__ == "__main__":
    main()
