"""The card fitter's choice and its count of layouts, on small documents of known
page counts (each ``<div>`` a page, all full but the last, ``fill`` of a page high)."""

from __future__ import annotations

import io

import pytest
from pypdf import PdfReader

from cardgen.render.pdf import PREDICTION_MARGIN, Fitter, _keep, extent, predicted_over

#: The content height of an A4 page with WeasyPrint's default 75 px margins [mm].
A4_CONTENT_MM = 297 - 2 * 75 * 25.4 / 96


def _block(word: str, height_mm: float, last: bool = False) -> str:
    """A word over an empty block (the innermost boxes the extent measures): the two
    ``height_mm`` high."""
    brk = "" if last else "break-after: page; "
    return f'<div style="{brk}font-size: 10px; line-height: 10px">{word}<div style="height: {height_mm - 10 * 25.4 / 96:.2f}mm"></div></div>'


def _doc(pages: int, word: str = "x", fill: float = 0.5) -> str:
    body = "".join(_block(f"{word} {i}", A4_CONTENT_MM - 1) for i in range(pages - 1))  # full but 1 mm
    last = _block(f"{word} last", fill * A4_CONTENT_MM, last=True)
    return f"<!DOCTYPE html><html lang='en'><body style='margin: 0'>{body}{last}</body></html>"


def _pages(data: bytes) -> int:
    return len(PdfReader(io.BytesIO(data)).pages)


@pytest.mark.parametrize(("pages", "fill"), [(1, 0.25), (2, 0.5), (3, 0.9)])
def test_extent_is_the_pages_before_the_last_and_the_last_ones_fill(tmp_path, pages, fill):
    fitter = Fitter()
    assert extent(fitter._layout(_doc(pages, fill=fill), tmp_path)) == pytest.approx(
        pages - 1 + fill, abs=0.01
    )


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


def _first_card(fitter: Fitter, tmp_path) -> None:
    """A group's first card: as is 3.5 pages, condensed 1.5 (a step of 2 pages)."""
    _, index, _ = fitter.fit((_doc(4, "a"), _doc(2, "a"), _doc(1, "a")), tmp_path, 2, "g")
    assert (index, fitter.layouts) == (1, 2)
    assert fitter.learned["g"]["steps"][0] == pytest.approx(2.0, abs=0.02)


def test_a_later_card_starts_from_the_groups_choice_and_takes_one_layout(tmp_path):
    """Its condensed variant fits at 1.6 pages; the one before, predicted at 1.6 + 2
    pages, is over the budget of 2 by far more than the margin: one layout."""
    fitter = Fitter()
    _first_card(fitter, tmp_path)
    _, index, _ = fitter.fit((_doc(4, "b", 0.6), _doc(2, "b", 0.6), _doc(1, "b")), tmp_path, 2, "g")
    assert (index, fitter.layouts) == (1, 3)


def test_a_card_that_needs_less_is_laid_out_back_to_its_least_condensed(tmp_path):
    """A group whose step is one page (2.5 → 1.5 pages); a card condensed to 0.9 of a
    page: the one before, predicted at 1.9 pages, may fit, so it is laid out; it
    fits (1.9 pages) and is printed."""
    fitter = Fitter()
    fitter.fit((_doc(3, "a"), _doc(2, "a"), _doc(1, "a")), tmp_path, 2, "g")
    assert fitter.learned["g"]["steps"][0] == pytest.approx(1.0, abs=0.02)
    assert 0.9 + 1.0 - PREDICTION_MARGIN <= 2
    _, index, pages = fitter.fit((_doc(2, "c", 0.9), _doc(1, "c", 0.9), _doc(1, "c", 0.2)), tmp_path, 2, "g")
    assert (index, pages, fitter.layouts) == (0, 2, 4)


def test_a_card_that_needs_more_steps_on(tmp_path):
    fitter = Fitter()
    _first_card(fitter, tmp_path)
    _, index, pages = fitter.fit((_doc(5, "d"), _doc(3, "d"), _doc(1, "d")), tmp_path, 2, "g")
    assert (index, pages, fitter.layouts) == (2, 2, 4)  # the choice overflowed; the last, padded to a sheet


def _stacked(word: str, *shares: float) -> str:
    """Blocks of the given shares of a page, none split across pages: a block that
    does not fit below the one before starts a page, and the gap it leaves is not
    in the extent."""
    blocks = "".join(
        f'<div style="break-inside: avoid; font-size: 10px; line-height: 10px">{word}'
        f'<div style="height: {share * A4_CONTENT_MM - 10 * 25.4 / 96:.2f}mm"></div></div>'
        for share in shares
    )
    return f"<!DOCTYPE html><html lang='en'><body style='margin: 0'>{blocks}</body></html>"


def _tight(word: str, first: float = 0.6) -> tuple[str, str, str]:
    """A card whose variant as is takes 3 pages though its extent is 1.95, within the
    margin of the budget of 2 (blocks 0.6, 0.5, 0.85: the 0.5 and the 0.85 each start a
    page), and whose condensed variant fits (0.6 + 0.3, then 0.85)."""
    return (_stacked(word, first, 0.5, 0.85), _stacked(word, first, 0.3, 0.85), _stacked(word, 0.2))


def test_a_card_as_large_as_one_that_overflowed_takes_one_layout(tmp_path):
    """The extent step cannot tell: the first card's condensed variant (1.75 pages)
    plus its step (0.2) is 1.95, within the margin of 2, yet the variant as is takes 3
    pages. A later card of the group as large as the first (its name is longer, in
    every variant alike) takes one layout; a smaller one (its first block 0.55 of a
    page: condensed 1.70) lays the variant before out, and it overflows too."""
    fitter = Fitter()
    _, index, pages = fitter.fit(_tight("first"), tmp_path, 2, "g")
    assert (index, pages, fitter.layouts) == (1, 2, 2)  # as is (3 pages), then condensed
    assert 1.75 + fitter.learned["g"]["steps"][0] - PREDICTION_MARGIN <= 2
    _, index, pages = fitter.fit(_tight("a longer name"), tmp_path, 2, "g")
    assert (index, pages, fitter.layouts) == (1, 2, 3)
    _, index, pages = fitter.fit(_tight("smaller", first=0.55), tmp_path, 2, "g")
    assert (index, pages, fitter.layouts) == (1, 2, 5)
    assert len(fitter._layout(_tight("a longer name")[0], tmp_path).pages) == 3  # the one it did not lay out


def test_what_a_larger_card_fitted_keeps_a_card_from_being_predicted_over():
    """Sizes are (extent of the measured variant [pages], characters the target
    variant adds). Overflowed at (1.90, 100); fitted at (2.00, 120): the group's
    layouts do not grow with size between them, so a card between is laid out; a
    card larger than both is known to overflow, one smaller than the overflow is not."""
    sizes: dict = {}
    _keep(sizes.setdefault((1, 0), {"over": [], "fit": []}), "over", (1.90, 100))
    _keep(sizes[(1, 0)], "fit", (2.00, 120))
    assert not predicted_over(sizes, (1, 0), (1.95, 110))
    assert predicted_over(sizes, (1, 0), (2.05, 130))
    assert predicted_over(sizes, (1, 0), (1.95, 125))  # adds more than the fitted card
    assert not predicted_over(sizes, (1, 0), (1.85, 130))
    assert not predicted_over(sizes, (1, 0), (1.95, 90))  # adds less than the one that overflowed
    assert not predicted_over(sizes, (2, 0), (2.05, 130))  # nothing seen for that pair


def test_only_the_sizes_that_decide_are_kept():
    points = {"over": [], "fit": []}
    for size in [(1.9, 100), (2.0, 110), (1.8, 120), (1.7, 130)]:
        _keep(points, "over", size)
    assert sorted(points["over"]) == [(1.7, 130), (1.8, 120), (1.9, 100)]  # (2.0, 110) is above (1.9, 100)
    for size in [(1.5, 50), (1.6, 60), (1.4, 70)]:
        _keep(points, "fit", size)
    assert sorted(points["fit"]) == [(1.4, 70), (1.6, 60)]
