"""Benchmark: the card fitter alone, old against new, on the same cards in one
process: N riders of seven vehicle kinds on the 40 km route of bench_event.py, planned
and rendered to HTML once, then every card fitted by commit 0f5edd5's fitter (halving
over the five variants, each card alone) and by :class:`cardgen.render.pdf.Fitter`
(least condensed first, learning per vehicle kind, shared drawings). Reports CPU
seconds per card and WeasyPrint layouts per card of each, and whether both chose a
variant within the page budget. Not part of the test run.

    .venv/bin/python bench/bench_fitter.py [--riders 105]
"""

from __future__ import annotations

import argparse
import logging
import shutil
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_event import VEHICLES  # noqa: E402
from bench_route import OUT, make_route  # noqa: E402


def halving_fit(variants, base: Path, target: Path, budget: int, counter: list) -> tuple[int, int]:
    """Commit 0f5edd5's fitter: halving over the variants, the answer's layout written."""
    from weasyprint import HTML

    from cardgen.render import pdf

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    fetcher = pdf.build_only_fetcher(base)
    url = base.resolve().as_uri() + "/"
    last, laid = len(variants) - 1, {}

    def layout(index):
        if index not in laid:
            counter[0] += 1
            laid[index] = HTML(string=variants[index], base_url=url, url_fetcher=fetcher).render(
                pdf_tags=True
            )
        return laid[index]

    lo, hi = 0, last
    while lo < hi:
        mid = (lo + hi) // 2
        if len(layout(mid).pages) <= budget:
            hi = mid
        else:
            lo = mid + 1
    document = layout(lo)
    document.write_pdf(target, pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True)
    return lo, len(document.pages)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--riders", type=int, default=105)
    args = parser.parse_args()
    from cardgen.build.pipeline import _plan_route, _routes, card_batches
    from cardgen.config import load_config
    from cardgen.plan.starts import event_starts
    from cardgen.render.pages import render_route, site_context
    from cardgen.render.pdf import Fitter

    folder = OUT / f"fitter-{args.riders}"
    shutil.rmtree(folder, ignore_errors=True)
    folder.mkdir(parents=True)
    make_route(folder / "sportive-40.gpx", points=4_000)
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib"]
    for i in range(args.riders):
        cp = 120 + (i * 7) % 180
        rows.append(f"Entrant {i:04d},{VEHICLES[i % len(VEHICLES)]},{cp},{int(cp * 0.7)},{cp},{1000 + i}")
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "site.toml").write_text(
        'riders = "entrants.csv"\n[event]\nstart = "07:00"\nstart_interval_min = 0.5\n'
        '[[routes]]\ngpx = "sportive-40.gpx"\n',
        encoding="utf-8",
    )
    config = load_config(folder / "site.toml")
    route = _routes(config, "bench", event_starts(config))[0]
    job, error = _plan_route((route, config, route.starts))
    assert error is None, error
    html = folder / "html"
    html.mkdir()
    _, cards = render_route(config, site_context(config, event_starts(config)), job, html)
    cards = [c for c in cards if c.variants]
    results = {}
    for name in ("old", "new"):
        out = folder / name
        shutil.copytree(html, out)
        counter, chosen = [0], {}
        t0 = time.process_time()
        if name == "old":
            for c in cards:
                chosen[c.target] = halving_fit(c.variants, out, out / Path(c.target).name, c.budget, counter)
        else:
            for batch in card_batches(cards, 40):
                fitter = Fitter()
                for c in batch:
                    chosen[c.target] = fitter.fit(
                        c.variants, out, out / Path(c.target).name, c.budget, c.group
                    )
                counter[0] += fitter.layouts
        cpu = time.process_time() - t0
        results[name] = (cpu, counter[0], chosen)
        budget = cards[0].budget
        over = sum(1 for variant, pages in chosen.values() if variant < 4 and pages > budget)
        print(
            f"{name} fitter: {len(cards)} cards, CPU {cpu:.1f} s ({cpu / len(cards):.2f} s per card), "
            f"{counter[0] / len(cards):.2f} layouts per card, {over} over budget"
        )
    old, new = results["old"], results["new"]
    same = sum(1 for a, b in zip(sorted(old[2]), sorted(new[2]), strict=True) if a == b)
    print(
        f"new / old CPU: {new[0] / old[0]:.2f}; cards choosing the same variant (as multisets): {same} of {len(cards)}"
    )


if __name__ == "__main__":
    main()
