"""Benchmark: the card fitter alone, old against new, on the same cards in one
process: N riders of seven vehicle kinds on the 40 km route of bench_event.py, planned
and rendered to HTML once, then every card fitted by commit 0f5edd5's fitter (halving
over the variants, each card alone, adapted to today's call shape) and by :class:`cardgen.render.pdf.Fitter`
(the variant learned per route and vehicle kind, confirmed by the layout it writes,
the one before it predicted from the extents learned; shared drawings). Reports CPU
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


def halving_fit(variants, base: Path, budget: int, continued_from: int) -> tuple[bytes, int, int, int]:
    """Commit 0f5edd5's fitter, in today's call shape (PDF bytes back, variants from
    ``continued_from`` on allowed twice the budget and ended on a whole sheet): halving
    over the variants, each card alone, the answer's layout written. Returns (PDF,
    variant index, pages, layouts made). ``bench_event.py --old-fitter`` uses it too."""
    from weasyprint import HTML

    from cardgen.render import pdf

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    fetcher = pdf.build_only_fetcher(base)
    url = base.resolve().as_uri() + "/"
    last, laid = len(variants) - 1, {}

    def layout(index):
        if index not in laid:
            laid[index] = HTML(string=variants[index], base_url=url, url_fetcher=fetcher).render(
                pdf_tags=True
            )
        return laid[index]

    def fits(index: int) -> bool:
        return len(layout(index).pages) <= (2 * budget if index >= continued_from else budget)

    lo, hi = 0, last  # the answer lies in lo..hi; the last variant is always taken
    while lo < hi:
        mid = (lo + hi) // 2
        if fits(mid):
            hi = mid
        else:
            lo = mid + 1
    document = layout(lo)
    pages = len(document.pages)
    data = document.write_pdf(pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True)
    if lo >= continued_from and pages % 2:  # the continuation is a whole sheet
        data = pdf._add_blank_page(data)
        pages += 1
    return data, lo, pages, len(laid)


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--riders", type=int, default=105)
    args = parser.parse_args()
    from cardgen.build.pipeline import _learn, _plan_route, _routes, card_batches, write_files
    from cardgen.config import load_config
    from cardgen.plan.starts import event_starts
    from cardgen.render.pages import CONTINUATION_STEP, render_route, site_context
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
    pages = render_route(config, site_context(config, event_starts(config)), job, html)
    write_files(html, pages.files)
    cards = [c for c in pages.cards if c.variants]
    results = {}
    for name in ("old", "new"):
        out = folder / name
        shutil.copytree(html, out)
        counter, chosen = [0], {}
        t0 = time.process_time()
        if name == "old":
            for c in cards:
                data, index, pages_, made = halving_fit(c.variants, out, c.budget, CONTINUATION_STEP)
                (out / Path(c.target).name).write_bytes(data)
                chosen[c.target] = (index, pages_)
                counter[0] += made
        else:
            learned: dict = {}
            for batch in card_batches(cards, 40):
                fitter = Fitter(learned)  # as the build: from what earlier batches learned
                for c in batch:
                    data, index, pages_ = fitter.fit(
                        c.variants, out, c.budget, c.group, continued_from=CONTINUATION_STEP
                    )
                    (out / Path(c.target).name).write_bytes(data)
                    chosen[c.target] = (index, pages_)
                counter[0] += fitter.layouts
                _learn(learned, fitter.news())
        cpu = time.process_time() - t0
        results[name] = (cpu, counter[0], chosen)
        budget = cards[0].budget
        over = sum(
            1
            for variant, n in chosen.values()
            if n > (2 * budget if variant >= CONTINUATION_STEP else budget)
        )
        print(
            f"{name} fitter: {len(cards)} cards, CPU {cpu:.1f} s ({cpu / len(cards):.2f} s per card), "
            f"{counter[0] / len(cards):.2f} layouts per card, {over} over budget"
        )
    old, new = results["old"], results["new"]
    same = sum(1 for target, (index, _) in old[2].items() if new[2][target][0] == index)
    print(f"new / old CPU: {new[0] / old[0]:.2f}; cards choosing the same variant: {same} of {len(cards)}")


if __name__ == "__main__":
    main()
