"""A pack's cover numbers each card's first page from its own length: laid out again
when its first guess of that length was wrong, once when the guess holds. The guess
for a cover may come from another cover's rows per page."""

from __future__ import annotations

import pytest
from pypdf import PdfReader

from cardgen.render import packs
from cardgen.render.packs import A5, PackEntry, cover_length, pack_cover


def _html(rows) -> str:
    """A cover: a heading and a table with a header row repeated on each page."""
    body = "".join(f"<tr><td>{entry.name}</td><td>{first}</td></tr>" for entry, first in rows)
    return (
        "<!DOCTYPE html><html lang='en'><head><title>c</title><style>@page { size: A5 }"
        "tr { break-inside: avoid }</style></head><body><h1>Cover</h1><table><thead><tr><th>Rider</th>"
        f"<th>Page</th></tr></thead><tbody>{body}</tbody></table></body></html>"
    )


def _entries(tmp_path, count: int) -> list[PackEntry]:
    return [PackEntry(f"Rider {i}", i, "", "r", tmp_path / f"{i}.pdf", pages=1 + i % 3) for i in range(count)]


@pytest.fixture
def layouts(monkeypatch):
    made = []
    real = packs.layout

    def counted(*args, **kwargs):
        document = real(*args, **kwargs)
        made.append(len(document.pages))
        return document

    monkeypatch.setattr(packs, "layout", counted)
    return made


def _check_numbers(cover: bytes, firsts: list[int], entries: list[PackEntry], tmp_path) -> None:
    """The first card starts after the cover (padded to an even count), each next one
    after the one before (padded likewise)."""
    (tmp_path / "cover.pdf").write_bytes(cover)
    length = len(PdfReader(tmp_path / "cover.pdf").pages)
    assert firsts[0] == length + length % 2 + 1
    for a, b, entry in zip(firsts, firsts[1:], entries, strict=False):
        assert b - a == entry.pages + entry.pages % 2


def test_a_cover_guessed_from_another_covers_rows_takes_one_layout(tmp_path, layouts):
    small = _entries(tmp_path, 60)
    cover, firsts, per_page = pack_cover(small, _html, tmp_path, A5)
    assert len(layouts) == 2  # guessed 2 pages, took more, laid out again with the numbers moved
    assert per_page is not None and per_page[1] > per_page[0]  # the heading takes room on page 1
    _check_numbers(cover, firsts, small, tmp_path)
    large = _entries(tmp_path, 250)
    cover, firsts, _ = pack_cover(large, _html, tmp_path, A5, per_page=per_page)
    assert len(layouts) == 3
    assert layouts[-1] + layouts[-1] % 2 == cover_length(250, per_page)
    _check_numbers(cover, firsts, large, tmp_path)


def test_a_wrong_guess_of_rows_costs_a_layout_not_the_numbers(tmp_path, layouts):
    entries = _entries(tmp_path, 120)
    cover, firsts, _ = pack_cover(entries, _html, tmp_path, A5, per_page=(200, 200))  # guesses 2 pages
    assert len(layouts) == 2
    _check_numbers(cover, firsts, entries, tmp_path)


@pytest.mark.parametrize(
    ("rows", "per_page", "pages"),
    [
        (10, (30, 35), 2),
        (30, (30, 35), 2),
        (31, (30, 35), 2),
        (65, (30, 35), 2),
        (66, (30, 35), 4),
        (100, (30, 35), 4),
    ],
)
def test_cover_length_counts_the_first_page_then_full_pages_and_ends_on_a_sheet(rows, per_page, pages):
    assert cover_length(rows, per_page) == pages


def test_the_build_guesses_covers_from_the_first_cover_long_enough_to_show_its_rows(tmp_path, layouts):
    """Routes of 3, 90 and 200 cards and the event's pack: the 3-card cover (one page)
    shows no full page of rows, so the 90-card one is laid out next, here (a guess of
    two pages, then again); the 200-card cover and the event's take one layout each
    from its rows per page. Every pack is written and reads back whole."""
    import shutil
    from types import SimpleNamespace

    import pikepdf

    from cardgen.build.pipeline import _write_packs
    from cardgen.render.pages import PackGroup

    card = tmp_path / "card.pdf"
    with pikepdf.new() as pdf:
        pdf.add_blank_page(page_size=A5)
        pdf.save(card)
    groups, everyone = [], []
    for name, count in (("short", 3), ("middle", 90), ("long", 200)):
        (tmp_path / name).mkdir()
        entries = []
        for i in range(count):
            shutil.copy(card, tmp_path / name / f"{i}.pdf")
            entries.append(PackEntry(f"Rider {name} {i}", i, "07:00", name, tmp_path / name / f"{i}.pdf", 1))
        groups.append(PackGroup(tmp_path / name, name, False, tuple(entries)))
        everyone += entries
    groups.append(PackGroup(tmp_path, "every route", True, tuple(everyone)))
    config = SimpleNamespace(templates=None, units="metric", card_size="A5", large_print=False, title="T")
    covers = _write_packs(config, groups, 1, tmp_path)
    assert len(layouts) == 5  # short 1, middle 2, long 1, the event's 1
    for where, count in (("short", 3), ("middle", 90), ("long", 200), (".", 293)):
        for name in ("all-cards.pdf", "all-cards-2up.pdf"):
            assert (tmp_path / where / name).is_file()
        pages = len(PdfReader(tmp_path / where / "all-cards.pdf").pages)
        assert pages == covers[where] + 2 * count  # each one-page card padded to a sheet
