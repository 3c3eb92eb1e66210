"""How the build splits cards between its rendering processes (build/pipeline.card_batches)."""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from cardgen.build.pipeline import card_batches


def _cards(route: str, count: int, kinds: str = "ab") -> list:
    return [
        SimpleNamespace(base=route, group=kinds[i % len(kinds)], target=f"{route}/{i:03d}")
        for i in range(count)
    ]


@pytest.mark.parametrize("count, size", [(100, 40), (9, 4), (3, 40), (80, 40), (81, 40), (1, 1)])
def test_a_routes_cards_are_split_into_batches_of_nearly_one_size(count, size):
    cards = _cards("r", count)
    batches = card_batches(list(cards), size)
    sizes = [len(b) for b in batches]
    assert len(batches) == -(-count // size)  # no more processes than the size asks for
    assert max(sizes) <= size and max(sizes) - min(sizes) <= 1
    # every card once, by kind then file, so that a batch's fitter meets a kind's cards together
    order = sorted(cards, key=lambda c: (c.group, c.target))
    assert [c for b in batches for c in b] == order


def test_a_batch_holds_one_routes_cards():
    batches = card_batches(_cards("one", 50) + _cards("two", 30), 40)
    assert [len(b) for b in batches] == [25, 25, 30]
    assert all(len({c.base for c in b}) == 1 for b in batches)
