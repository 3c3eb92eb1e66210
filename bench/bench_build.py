"""Benchmark: full builds of the demo and of a synthetic site of 20 routes × 5 riders
with --jobs 1 and --jobs 2 (speed-up; target ≥ 1.7× on 2 cores), the share of the
build spent rendering PDFs (target ≥ 75 %), the time per card (HTML + PDF; PDF share
of it, target ≥ 80 %), and a no-change rebuild as a share of the full build (target
≤ 5 %). All in one run. Not part of the test run.

    .venv/bin/python bench/bench_build.py
"""

from __future__ import annotations

import re
import shutil
import tempfile
import time
from pathlib import Path

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.paths import demo_site

SAMPLES = demo_site().parent


def synthetic_site(folder: Path) -> Path:
    """20 routes (the four demo routes, five renamed copies of each) and five riders."""
    folder.mkdir(parents=True)
    routes = []
    for copy in range(5):
        for gpx in sorted(SAMPLES.glob("*.gpx")):
            name = f"{gpx.stem}-{copy}.gpx"
            text = gpx.read_text(encoding="utf-8").replace("<name>", f"<name>Copy {copy} of ", 2)
            (folder / name).write_text(text, encoding="utf-8")
            routes.append(name)
    demo = (SAMPLES / "site.toml").read_text(encoding="utf-8")
    # every rider on every copy: the demo's own route choices name the demo's routes
    riders = re.sub(r"^routes = \[.*\]\n", "", demo[demo.index("[[riders]]") :], flags=re.M)
    # the demo's spreadsheet riders name the demo's routes: not these copies
    riders = riders.split("# More entrants")[0]
    body = '[site]\ntitle = "Synthetic"\n[event]\nstart = "08:00"\n'
    body += "".join(f'[[routes]]\ngpx = "{r}"\n' for r in routes) + riders
    (folder / "site.toml").write_text(body, encoding="utf-8")
    return folder / "site.toml"


def timed_build(config_path: Path, out: Path, jobs: int):
    shutil.rmtree(out, ignore_errors=True)
    t0 = time.perf_counter()
    report = build_site(load_config(config_path), out, jobs=jobs)
    return time.perf_counter() - t0, report


def card_costs(config_path: Path, work: Path):
    """Per card of the demo's hill loop, as the build makes them: the route's pages,
    drawings and card sources (every variant's HTML) over its cards, and the PDF
    (the fitter, as one worker batch). Returns (seconds of HTML per card, seconds of
    PDF per card, cards)."""
    from cardgen.build.pipeline import _plan_route, _render_pdfs, _routes, write_files
    from cardgen.plan.starts import event_starts
    from cardgen.render.pages import render_route, site_context

    config = load_config(config_path)
    route = next(
        r for r in _routes(config, "bench", event_starts(config)) if r.config.gpx.stem == "hill-loop"
    )
    job, error = _plan_route((route, config, route.starts))
    assert error is None, error
    work.mkdir(parents=True, exist_ok=True)
    t0 = time.process_time()
    pages = render_route(config, site_context(config, event_starts(config)), job, work)
    write_files(work, pages.files)
    t_html = time.process_time() - t0
    cards = [c for c in pages.cards if c.variants]
    t0 = time.process_time()
    _render_pdfs(cards)
    t_pdf = time.process_time() - t0
    return t_html / len(cards), t_pdf / len(cards), len(cards)


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        t_html, t_pdf, n = card_costs(SAMPLES / "site.toml", tmp / "card")
        print(
            f"the demo's hill loop, {n} cards, CPU per card: HTML (with the route's pages and drawings "
            f"shared out) {t_html * 1000:.0f} ms, PDF {t_pdf * 1000:.0f} ms; PDF share "
            f"{t_pdf / (t_html + t_pdf):.0%} (target >= 80%)"
        )
        for label, config_path in (
            ("demo", SAMPLES / "site.toml"),
            ("20 routes x 5 riders", synthetic_site(tmp / "synthetic")),
        ):
            out = tmp / "out"
            one, report = timed_build(config_path, out, 1)
            two, _ = timed_build(config_path, out, 2)
            t0 = time.perf_counter()
            again = build_site(load_config(config_path), out, jobs=2)
            rebuild = time.perf_counter() - t0
            assert again.up_to_date
            share = report.seconds["pdf"] / one
            print(
                f"{label}: {report.cards_rendered} cards; --jobs 1 {one:.1f} s, --jobs 2 {two:.1f} s, "
                f"speed-up {one / two:.2f}x (target >= 1.7x); PDF share of the --jobs 1 build {share:.0%} "
                f"(target >= 75%); no-change rebuild {rebuild:.2f} s = {rebuild / two:.1%} of the --jobs 2 "
                f"build (target <= 5%)"
            )


if __name__ == "__main__":
    main()
