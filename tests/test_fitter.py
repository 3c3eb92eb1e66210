"""The card fitter's choice and its count of layouts, on small documents of known
page counts (each ``<div>`` a page)."""

from __future__ import annotations

import io

from pypdf import PdfReader

from cardgen.render.pdf import Fitter


def _doc(pages: int, word: str = "x") -> str:
    body = "".join(f'<div style="break-after: page">{word} {i}</div>' for i in range(pages - 1))
    return f"<!DOCTYPE html><html><body>{body}<div>{word} last</div></body></html>"


def _pages(data: bytes) -> int:
    return len(PdfReader(io.BytesIO(data)).pages)


def test_a_continuation_reuses_the_layout_of_its_step(tmp_path):
    """Two steps over a budget of 2, then the same two allowed a continuation (4): the
    least condensed that fits 4 pages is printed from its first layout, padded to a
    whole sheet, with no layout made twice."""
    three, five = _doc(3, "a"), _doc(5, "b")
    fitter = Fitter()
    data, index, pages = fitter.fit((five, three, five, three, _doc(1)), tmp_path, 2, "g", continued_from=2)
    assert (index, pages, _pages(data)) == (3, 4, 4)
    assert fitter.layouts == 2  # five and three, once each


def test_the_least_condensed_step_that_fits_the_continuation_wins(tmp_path):
    three, four = _doc(3, "a"), _doc(4, "b")
    fitter = Fitter()
    _, index, pages = fitter.fit((three, four, three, four, _doc(1)), tmp_path, 2, "g", continued_from=2)
    assert (index, pages) == (2, 4)
    assert fitter.layouts == 2


def test_within_the_budget_no_continuation(tmp_path):
    fitter = Fitter()
    _, index, pages = fitter.fit((_doc(3), _doc(2, "b"), _doc(3)), tmp_path, 2, "g", continued_from=2)
    assert (index, pages) == (1, 2)


def test_a_later_card_of_the_group_skips_what_overflowed(tmp_path):
    """The second card of a group, no shorter, skips the steps that overflowed for the
    first, within the budget and with the continuation alike: one layout."""
    five, three = _doc(5, "b"), _doc(3, "a")
    fitter = Fitter()
    fitter.fit((five, three, five, three, _doc(1)), tmp_path, 2, "g", continued_from=2)
    before = fitter.layouts
    five2, three2 = _doc(5, "c"), _doc(3, "d")
    _, index, pages = fitter.fit((five2, three2, five2, three2, _doc(1)), tmp_path, 2, "g", continued_from=2)
    assert (index, pages) == (3, 4)
    assert fitter.layouts - before == 1
