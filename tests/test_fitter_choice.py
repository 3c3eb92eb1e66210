"""The fitter's choice is the least condensed variant that fits: for a sample of
cards, the next less condensed variant (a different HTML) is laid out here and seen
to overflow its page limit, and the printed one is within its own. The cards are an
invented event on the demo's hill loop and day ride (the steps a card needs differ
there by rider: variants 1 and 3 within the budget, and the continuation), fitted in
small batches as the build fits them: one fitter per batch, starting from what the
build's earlier batches learned; and the demo's routes as the build fits them."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from cardgen.build.pipeline import _learn, _plan_route, _routes, card_batches, write_files
from cardgen.config import load_config
from cardgen.paths import demo_site
from cardgen.plan.starts import event_starts
from cardgen.render.pages import CONTINUATION_STEP, render_route, site_context
from cardgen.render.pdf import Fitter

pytestmark = pytest.mark.slow

KINDS = ("road-hoods", "city-upright", "handcycle")


def _event(folder: Path, gpx: str, riders: int) -> Path:
    """``riders`` invented entrants of three kinds, CP 120–300 W, on one demo route."""
    shutil.copy(demo_site().parent / gpx, folder / gpx)
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib"]
    for i in range(riders):
        cp = 120 + (i * 37) % 180
        rows.append(f"Entrant {i:02d},{KINDS[i % len(KINDS)]},{cp},{int(cp * 0.7)},{cp},{100 + i}")
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "site.toml").write_text(
        f'riders = "entrants.csv"\n[site]\ncard_size = "A5"\n[event]\nstart = "07:00"\n'
        f'start_interval_min = 0.5\n[[routes]]\ngpx = "{gpx}"\n',
        encoding="utf-8",
    )
    return folder / "site.toml"


def rendered(site: Path, out: Path, route_index: int = 0):
    """A route of ``site`` planned and rendered into ``out``/out, its drawings
    written (:class:`~cardgen.render.pages.RoutePages`, folder)."""
    config = load_config(site)
    starts = event_starts(config)
    route = _routes(config, "test", starts)[route_index]
    job, error = _plan_route((route, config, route.starts))
    assert error is None, error
    folder = out / "out"
    folder.mkdir()
    pages = render_route(config, site_context(config, starts), job, folder)
    write_files(folder, pages.files)
    return pages, folder


def _fitted(site: Path, batch: int, out: Path, route_index: int = 0):
    """Every card of a route, fitted as the build fits them. Returns (card, chosen
    variant, its pages) for each card, the layouts made and the folder."""
    pages, folder = rendered(site, out, route_index)
    cards = [c for c in pages.cards if c.variants]
    learned: dict = {}
    chosen, layouts = [], 0
    for members in card_batches(cards, batch):
        fitter = Fitter(learned)
        for card in members:
            _, index, n = fitter.fit(
                card.variants, folder, card.budget, (card.base, card.group), continued_from=CONTINUATION_STEP
            )
            chosen.append((card, index, n))
        layouts += fitter.layouts
        _learn(learned, fitter.news())
    return chosen, layouts, folder


@pytest.mark.parametrize("gpx", ["hill-loop.gpx", "day-ride.gpx"])
def test_no_less_condensed_variant_fits(tmp_path, gpx):
    chosen, layouts, folder = _fitted(_event(tmp_path, gpx, 15), 4, tmp_path)
    _check(chosen, folder)
    assert layouts <= 2 * len(chosen)  # a sanity bound; the bench measures the mean


def test_the_demo_cards_are_condensed_no_more_than_they_need(tmp_path):
    """The demo's routes, each as the build fits it (one card per kind: each kind's
    first card starts from what the route's other kinds chose)."""
    chosen = []
    for k in range(4):
        (tmp_path / str(k)).mkdir()
        got, _, folder = _fitted(demo_site(), 40, tmp_path / str(k), route_index=k)
        _check(got, folder)
        chosen += got
    assert len({index for _, index, _ in chosen}) > 1


def _check(chosen, folder: Path) -> None:
    """Each card within its limit (unless it is the last variant), and the next less
    condensed variant with other HTML laid out and seen to overflow its own."""
    check = Fitter()
    for card, index, pages in chosen:
        limit = 2 * card.budget if index >= CONTINUATION_STEP else card.budget
        if index < len(card.variants) - 1:
            assert pages <= limit, card.target
        before = [j for j in range(index) if card.variants[j] != card.variants[index]]
        same = [j for j in range(index) if card.variants[j] == card.variants[index]]
        # a variant before it with the same HTML is allowed fewer pages (the
        # continuation repeats its step's HTML): it overflowed with these pages
        for j in same:
            assert pages > card.budget, (card.target, j)
        if before:
            j = before[-1]
            limit_j = 2 * card.budget if j >= CONTINUATION_STEP else card.budget
            document = check._layout(card.variants[j], folder)
            assert len(document.pages) > limit_j, (card.target, index, j, len(document.pages))
