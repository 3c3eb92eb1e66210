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

import io
import itertools
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import BinaryIO

from cardgen.errors import CardgenError
from cardgen.render.pdf import layout, written
from cardgen.render.pdfjoin import PageWriter, Source

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
    per_page: tuple[int, int] | None = None,
) -> tuple[bytes, list[int], tuple[int, int] | None]:
    """The cover of a pack of ``entries`` (already in print order), the first page of
    each card in the pack, and the cover's rows per page (:func:`rows_per_page`).

    ``cover_html(rows)`` renders the cover for rows of (entry, first page) to HTML. The
    cover is laid out once, taking its own length to be ``cover_pages`` (the last
    build's, else 2) or, given another cover's ``per_page``, the length its rows take
    at that many a page (:func:`cover_length`), and again if its length moved the page
    numbers; only the last layout is written. A card is opened to count its pages only
    when its entry does not say them."""
    import pikepdf

    counts = []
    for entry in entries:
        if entry.pages is None:
            with pikepdf.open(entry.pdf) as pdf:
                counts.append(len(pdf.pages))
        else:
            counts.append(entry.pages)
    if per_page is not None:
        cover_pages = cover_length(len(entries), per_page)
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
    return written(document), firsts, rows_per_page(document)


def rows_per_page(document) -> tuple[int, int] | None:
    """A cover layout's table rows on its first page and on a full page after it (its
    second, when a third follows), or None for a cover of fewer than three pages."""
    counts = [_body_rows(page._page_box) for page in document.pages]
    return (counts[0], counts[1]) if len(counts) >= 3 and counts[1] > 0 else None


def cover_length(rows: int, per_page: tuple[int, int]) -> int:
    """The pages (an even count) a cover of ``rows`` rows takes at ``per_page`` (rows on
    its first page, on each later one)."""
    first, full = per_page
    pages = 1 + max(0, -(-(rows - first) // full))
    return pages + pages % 2


def _body_rows(box) -> int:
    """Rows of table bodies (not their repeated headers) laid out in ``box``."""
    count, stack = 0, [box]
    while stack:
        box = stack.pop()
        if type(box).__name__ == "TableRowGroupBox" and not box.is_header and not box.is_footer:
            count += sum(type(row).__name__ == "TableRowBox" for row in box.children)
            continue
        stack.extend(getattr(box, "children", None) or ())
    return count


def write_pack(
    cover: bytes, entries: Sequence[PackEntry], sink: BinaryIO, title: str, page_size: tuple[float, float]
) -> None:
    """The pack into ``sink``: the cover, then every card, each padded with a blank
    page of ``page_size`` to an even count. One card is open at a time
    (:class:`~cardgen.render.pdfjoin.PageWriter`), so a pack of thousands of cards
    takes about the memory of one."""
    write_packs([PackFiles(cover, tuple(entries), page_size, sink, None, (title, ""))])


def write_two_up(cover: bytes, entries: Sequence[PackEntry], sink: BinaryIO, title: str) -> None:
    """Two A5 pages on each A4 landscape sheet, cards paired for cut-and-stack (see
    the module notes), into ``sink``. The cover is paired like a card. Each card
    takes an even number of pages, as in the pack: a blank page pads an odd one.

    Each A5 page is drawn on its sheet as a form XObject (ISO 32000-1 §8.10), so its
    content is copied, not parsed. Two cards are open at a time."""
    write_packs([PackFiles(cover, tuple(entries), A5, None, sink, ("", title))])


@dataclass(frozen=True)
class PackFiles:
    """One pack to write: its cover (PDF), its cards in order, the cards' page size,
    and the files it goes into (binary files open for writing; None: not made): the
    pack as it is, and two-up, with their titles."""

    cover: bytes
    entries: tuple[PackEntry, ...]
    page_size: tuple[float, float]
    flat: BinaryIO | None
    two_up: BinaryIO | None
    titles: tuple[str, str] = ("all-cards", "all-cards-2up")


def write_packs(packs: Sequence[PackFiles]) -> None:
    """Every file of ``packs`` in one pass over the cards: each card is read once
    (:class:`~cardgen.render.pdfjoin.Source`) and written into every pack that holds
    it (a route's pack and the event's, each as it is and two-up), so a card costs
    one reading however many packs it is in. The cards are taken in the order of the
    pack with the most of them; a pack whose cards are not in that order (never one
    the build makes: the event's pack is the routes' packs one after the other) is
    written in a pass of its own. One card is open at a time (two for the two-up)."""
    if not packs:
        return
    order = max(packs, key=lambda pack: len(pack.entries)).entries
    position = {entry.pdf: i for i, entry in enumerate(order)}
    together: list[PackFiles] = []
    alone: list[PackFiles] = []
    for pack in packs:
        places = [position.get(entry.pdf, -1) for entry in pack.entries]
        in_order = min(places, default=0) >= 0 and all(a < b for a, b in itertools.pairwise(places))
        (together if in_order else alone).append(pack)
    _one_pass(order, together)
    for pack in alone:
        _one_pass(pack.entries, [pack])


def _one_pass(order: Sequence[PackEntry], packs: Sequence[PackFiles]) -> None:
    import pikepdf

    streams = []
    for pack in packs:
        outs: list = []
        if pack.flat is not None:
            outs.append(_Flat(PageWriter(pack.flat), pack.page_size, pack.titles[0]))
        if pack.two_up is not None:
            outs.append(_TwoUp(PageWriter(pack.two_up), pack.titles[1]))
        with pikepdf.open(io.BytesIO(pack.cover)) as pdf:
            cover = Source(pdf)
        for out in outs:
            out.add(cover, None)
        streams.append(({entry.pdf for entry in pack.entries}, outs))
    for entry in order:
        takers = [outs for members, outs in streams if entry.pdf in members]
        if not takers:
            continue
        with pikepdf.open(entry.pdf) as pdf:
            source = Source(pdf)
        for outs in takers:
            for out in outs:
                out.add(source, entry)
    for _, outs in streams:
        for out in outs:
            out.finish()


class _Flat:
    """A pack as it is: each part padded with a blank page to an even count."""

    def __init__(self, writer: PageWriter, page_size: tuple[float, float], title: str) -> None:
        self.writer, self.page_size, self.title = writer, page_size, title

    def add(self, source: Source, entry: PackEntry | None) -> None:
        pages = self.writer.add_pages(source)
        if entry is not None and entry.pages is not None and pages != entry.pages:
            # the cover numbered the pages from the count it was given (the last
            # build's manifest, for a card kept from it)
            raise CardgenError(
                f"{entry.pdf.name} has {pages} pages, not the {entry.pages} that manifest.json "
                "says; remove the output folder and build again"
            )
        if pages % 2:
            self.writer.add_blank(self.page_size)

    def finish(self) -> None:
        self.writer.finish(self.title)


class _TwoUp:
    """A pack two-up: parts taken in pairs (:func:`_two_up_pair`)."""

    def __init__(self, writer: PageWriter, title: str) -> None:
        self.writer, self.title = writer, title
        self.waiting: Source | None = None

    def add(self, source: Source, entry: PackEntry | None) -> None:
        if self.waiting is None:
            self.waiting = source
            return
        self._pair(self.waiting, source)
        self.waiting = None

    def _pair(self, left: Source, right: Source | None) -> None:
        _two_up_pair(self.writer, left, right)
        self.writer.forget(left)
        self.writer.forget(right)

    def finish(self) -> None:
        if self.waiting is not None:
            self._pair(self.waiting, None)
            self.waiting = None
        self.writer.finish(self.title)


def _two_up_pair(writer: PageWriter, left: Source, right: Source | None) -> None:
    """The sheets of two cards (``right`` None for a card left alone)."""
    counts = [len(source.pages) if source is not None else 0 for source in (left, right)]
    length = max(n + n % 2 for n in counts)
    width, height = A4_LANDSCAPE
    for i in range(length):
        order = (0, 1) if i % 2 == 0 else (1, 0)  # a short-edge flip swaps left and right
        forms, ops = [], []
        for slot, side in enumerate(order):
            source = (left, right)[side]
            if source is not None and i < counts[side]:  # fixed names, so the same input gives the same bytes
                forms.append((f"/P{slot}", source, i))
                ops.append(f"q 1 0 0 1 {slot * A5[0]:.2f} 0 cm /P{slot} Do Q")
        ops.append(
            f"q 0.5 w 0 G {width / 2:.2f} 0 m {width / 2:.2f} {MARK:.2f} l S "
            f"{width / 2:.2f} {height - MARK:.2f} m {width / 2:.2f} {height:.2f} l S Q"
        )
        writer.add_sheet((width, height), forms, " ".join(ops))
