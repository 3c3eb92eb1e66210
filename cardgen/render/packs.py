"""Print packs: every card of a route (or of the event) in one PDF, ready to print.

``all-cards.pdf``: a cover listing each rider with bib, start and the page their card
begins on, then the cards in start order (bib, then name, to break ties). The cover
and every card are padded with blank pages to an even count, so that duplex printing
puts each card on sheets of its own and every card begins on an odd (front) page.

``all-cards-2up.pdf`` (A5 cards only): the same pages imposed two A5 pages side by
side on A4 landscape sheets, for cut-and-stack: cards are taken in pairs (A, B); a
sheet's front carries A's and B's front pages, its back B's and A's back pages
(swapped: turned over about its short edge, like a book page, the sheet's right
half is behind its left), with cut marks at the middle. So it is printed double-sided
with "flip on short edge", as its cover says.
"""

from __future__ import annotations

import contextlib
import io
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from cardgen.errors import CardgenError
from cardgen.render.pdf import layout, written
from cardgen.render.pdfjoin import PageWriter

#: A4 landscape and A5 in PostScript points.
A4_LANDSCAPE = (841.89, 595.28)
A5 = (419.53, 595.28)
#: Length of the cut marks [pt] (about 4 mm), drawn in the outer margin.
MARK = 11.3


@dataclass(frozen=True)
class PackEntry:
    """One card in a pack: who, the PDF file and its pages (None: not known, the
    file is opened to count them)."""

    name: str
    bib: int | None
    start: str  # "08:42", or "" without a start time
    route: str
    pdf: Path
    pages: int | None = None


def pack_cover(
    entries: Sequence[PackEntry],
    cover_html,
    base: Path,
    page_size: tuple[float, float],
    cover_pages: int = 2,
) -> tuple[bytes, list[int]]:
    """The cover of a pack of ``entries`` (already in print order), and the first page
    of each card in the pack.

    ``cover_html(rows)`` renders the cover for rows of (entry, first page) to HTML. The
    cover is laid out once, taking its own length to be ``cover_pages`` (the last
    build's, else 2), and again if its length moved the page numbers; only the last
    layout is written. A card is opened to count its pages only when its entry does
    not say them."""
    import pikepdf

    counts = []
    for entry in entries:
        if entry.pages is None:
            with pikepdf.open(entry.pdf) as pdf:
                counts.append(len(pdf.pages))
        else:
            counts.append(entry.pages)
    for _ in range(3):
        firsts, page = [], cover_pages + 1
        for n in counts:
            firsts.append(page)
            page += n + n % 2
        document = layout(cover_html(list(zip(entries, firsts, strict=True))), base)
        length = len(document.pages)
        if length + length % 2 == cover_pages:
            break
        cover_pages = length + length % 2
    return written(document), firsts


def write_pack(
    cover: bytes, entries: Sequence[PackEntry], sink: BinaryIO, title: str, page_size: tuple[float, float]
) -> None:
    """The pack into ``sink``: the cover, then every card, each padded with a blank
    page of ``page_size`` to an even count. One card is open at a time
    (:class:`~cardgen.render.pdfjoin.PageWriter`), so a pack of thousands of cards
    takes about the memory of one."""

    writer = PageWriter(sink)
    for entry, source in zip([None, *entries], _sources(cover, entries), strict=True):
        with source as pdf:
            pages = writer.add_pages(pdf)
            if entry is not None and entry.pages is not None and pages != entry.pages:
                # the cover numbered the pages from the count it was given (the last
                # build's manifest, for a card kept from it)
                raise CardgenError(
                    f"{entry.pdf.name} has {pages} pages, not the {entry.pages} that manifest.json "
                    "says; remove the output folder and build again"
                )
            if pages % 2:
                writer.add_blank(page_size)
    writer.finish(title)


def write_two_up(cover: bytes, entries: Sequence[PackEntry], sink: BinaryIO, title: str) -> None:
    """Two A5 pages on each A4 landscape sheet, cards paired for cut-and-stack (see
    the module notes), into ``sink``. The cover is paired like a card. Each card
    takes an even number of pages, as in the pack: a blank page pads an odd one.

    Each A5 page is drawn on its sheet as a form XObject (ISO 32000-1 §8.10), so its
    content is copied, not parsed. Two cards are open at a time."""
    writer = PageWriter(sink)
    sources = iter(_sources(cover, entries))
    for first in sources:
        second = next(sources, None)
        with first as left, second or contextlib.nullcontext() as right:
            _two_up_pair(writer, left, right)
            writer.forget(left)
            writer.forget(right)
    writer.finish(title)


def _two_up_pair(writer: PageWriter, left, right) -> None:
    """The sheets of two cards (``right`` None for a card left alone)."""
    counts = [len(pdf.pages) if pdf is not None else 0 for pdf in (left, right)]
    length = max(n + n % 2 for n in counts)
    width, height = A4_LANDSCAPE
    for i in range(length):
        order = (0, 1) if i % 2 == 0 else (1, 0)  # a short-edge flip swaps left and right
        forms, ops = [], []
        for slot, side in enumerate(order):
            pdf = (left, right)[side]
            if i < counts[side]:  # fixed names, so the same input gives the same bytes
                forms.append((f"/P{slot}", pdf.pages[i], pdf))
                ops.append(f"q 1 0 0 1 {slot * A5[0]:.2f} 0 cm /P{slot} Do Q")
        ops.append(
            f"q 0.5 w 0 G {width / 2:.2f} 0 m {width / 2:.2f} {MARK:.2f} l S "
            f"{width / 2:.2f} {height - MARK:.2f} m {width / 2:.2f} {height:.2f} l S Q"
        )
        writer.add_sheet((width, height), forms, " ".join(ops))


def _sources(cover: bytes, entries: Sequence[PackEntry]):
    """The cover and each card, opened one at a time as the caller takes them."""
    import pikepdf

    yield pikepdf.open(io.BytesIO(cover))
    for entry in entries:
        yield pikepdf.open(entry.pdf)
