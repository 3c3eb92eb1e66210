"""The card fitter learns across the build's worker processes: what cards of one
route and vehicle kind chose, and by how much each variant reaches further than the
next, carries to later batches, so a later batch lays each card out once."""

from __future__ import annotations

from pathlib import Path

import pikepdf

from cardgen.build.pipeline import PackedCard, _Batch, _learn, _render_pdfs
from cardgen.render.pages import CardSource


def _html(pages: int, words: str = "") -> str:
    # the last page half full: its content reaches well past a page limit
    full = (
        '<div style="break-after: page"><p style="margin: 0">page</p><div style="height: 220mm"></div></div>'
    )
    body = full * (pages - 1) + f'<p style="margin: 0">last {words}</p><div style="height: 120mm"></div>'
    return f"<!DOCTYPE html><html lang='en'><head><title>t</title></head><body>{body}</body></html>"


def _cards(folder: Path, names: list[str]) -> list[PackedCard]:
    """Cards of one route and kind: as is, three pages; condensed, one (budget 2)."""
    cards = []
    for name in names:
        variants = (_html(3, name), _html(1, name)) + (_html(1, name),) * 4
        cards.append(
            PackedCard.of(
                CardSource(variants[0], str(folder), str(folder / f"{name}.pdf"), variants, 2, "road")
            )
        )
    return cards


def test_a_later_batch_starts_from_what_earlier_batches_learned(tmp_path):
    first = _Batch(_cards(tmp_path, ["a", "b"]))
    targets, layouts, learned, pages = _render_pdfs(first)
    assert layouts == 3  # a: the variant as is overflows, then the condensed one; b: condensed at once
    assert all(Path(t).read_bytes().startswith(b"%PDF") for t in targets)
    for target in targets:  # the pages the packs' covers count on, as the files have them
        with pikepdf.open(target) as pdf:
            assert pages[target] == len(pdf.pages)
    later = _Batch(_cards(tmp_path, ["c", "d"]))
    later.learned = learned
    _, layouts, _, _ = _render_pdfs(later)
    assert layouts == 2  # one each
    alone = _Batch(_cards(tmp_path, ["c", "d"]))  # without what was learned: c learns again
    assert _render_pdfs(alone)[1] == 3


def test_what_fitters_learned_merges_steps_by_minimum_and_choices_by_count():
    learned: dict = {}
    _learn(learned, {("r", "road"): {"steps": {0: 0.9, 1: 0.5}, "chosen": {1: 3}}})
    _learn(
        learned,
        {
            ("r", "road"): {"steps": {0: 0.7}, "chosen": {1: 1, 2: 2}},
            ("r", "tandem"): {"steps": {0: 0.8}, "chosen": {0: 1}},
        },
    )
    assert learned == {
        ("r", "road"): {"steps": {0: 0.7, 1: 0.5}, "chosen": {1: 4, 2: 2}},
        ("r", "tandem"): {"steps": {0: 0.8}, "chosen": {0: 1}},
    }


def test_sizes_learned_in_two_processes_merge_to_what_decides():
    """Overflowed sizes keep their least, fitted sizes their largest
    (:func:`cardgen.render.pdf.predicted_over`)."""
    learned: dict = {}
    _learn(
        learned,
        {("r", "road"): {"steps": {}, "chosen": {}, "sizes": {(1, 0): {"over": [(1.9, 10)], "fit": []}}}},
    )
    _learn(
        learned,
        {
            ("r", "road"): {
                "steps": {},
                "chosen": {},
                "sizes": {(1, 0): {"over": [(1.8, 10)], "fit": [(1.5, 4)]}},
            }
        },
    )
    assert learned[("r", "road")]["sizes"] == {(1, 0): {"over": [(1.8, 10)], "fit": [(1.5, 4)]}}


def test_a_batch_reports_only_the_cards_it_chose_itself(tmp_path):
    """A worker starts from what earlier batches learned and reports what it learned:
    the build adds the reports up, so a count of chosen variants it was handed must
    not come back in its report (three rounds of two workers had counted the first
    round's cards 3 × 3 = 9 times each, outweighing what later rounds chose)."""
    first = _Batch(_cards(tmp_path, ["a", "b"]))
    learned: dict = {}
    _learn(learned, _render_pdfs(first)[2])
    assert learned[(str(tmp_path), "road")]["chosen"] == {1: 2}
    for names in (["c", "d"], ["e"]):  # two workers of the next round, handed the same
        later = _Batch(_cards(tmp_path, names))
        later.learned = {group: dict(seen) for group, seen in learned.items()}
        report = _render_pdfs(later)[2]
        assert report[(str(tmp_path), "road")]["chosen"] == {1: len(names)}
        _learn(learned, report)
    assert learned[(str(tmp_path), "road")]["chosen"] == {1: 5}  # a to e, once each
