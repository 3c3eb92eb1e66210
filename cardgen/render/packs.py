"""Print packs: every card of a route (or of the event) in one PDF, ready to print.

``all-cards.pdf``: a cover listing each rider with bib, start and the page their card
begins on, then the cards in start order (bib, then name, to break ties). The cover
and every card are padded with blank pages to an even count, so that duplex printing
puts each card on sheets of its own and every card begins on an odd (front) page.

``all-cards-2up.pdf`` (A5 cards only): the same pages imposed two A5 pages side by
side on A4 landscape sheets, for cut-and-stack: cards are taken in pairs (A, B); a
sheet's front carries A's and B's front pages, its back B's and A's back pages
(swapped, as a long-edge flip turns the sheet), with cut marks at the middle.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

#: A4 landscape and A5 in PostScript points.
A4_LANDSCAPE = (841.89, 595.28)
A5 = (419.53, 595.28)
#: Length of the cut marks [pt] (about 4 mm), drawn in the outer margin.
MARK = 11.3


@dataclass(frozen=True)
class PackEntry:
    """One card in a pack: who, and the PDF file."""

    name: str
    bib: int | None
    start: str  # "08:42", or "" without a start time
    route: str
    pdf: Path


def _pages(path: Path) -> int:
    from pypdf import PdfReader

    return len(PdfReader(path).pages)


def make_pack(
    entries: Sequence[PackEntry], cover_html, base: Path, target: Path, page_size: tuple[float, float]
) -> list[int]:
    """Write the pack of ``entries`` (already in print order) to ``target``.

    ``cover_html(rows)`` renders the cover for rows of (entry, first page) to HTML;
    the cover is rendered once, and again if its own length moved the page numbers.
    Returns the first page of each card.
    """
    from pypdf import PdfReader, PdfWriter

    from cardgen.render.pdf import write_pdf

    counts = [_pages(e.pdf) for e in entries]
    cover_pages, cover = 2, base / ".cover.pdf"
    for _ in range(3):
        firsts, page = [], cover_pages + 1
        for n in counts:
            firsts.append(page)
            page += n + n % 2
        write_pdf(cover_html(list(zip(entries, firsts, strict=True))), base, cover)
        length = _pages(cover)
        if length + length % 2 == cover_pages:
            break
        cover_pages = length + length % 2
    writer = PdfWriter()
    for path in [cover, *(e.pdf for e in entries)]:
        reader = PdfReader(path)
        for p in reader.pages:
            writer.add_page(p)
        if len(reader.pages) % 2:
            writer.add_blank_page(*page_size)
    writer.add_metadata({"/Title": target.stem})
    with open(target, "wb") as f:
        writer.write(f)
    cover.unlink()
    return firsts


def impose_two_up(pack: Path, target: Path, card_firsts: Sequence[int]) -> None:
    """Two A5 pages on each A4 landscape sheet, cards paired for cut-and-stack (see
    the module notes). ``card_firsts`` are the 1-based first pages of the cards; the
    cover (the pages before the first card) is paired like a card.

    Each A5 page becomes a form XObject drawn at its place on the sheet (ISO 32000-1
    §8.10), so its content is copied, not parsed: a few milliseconds a page."""
    from pypdf import PdfReader, PdfWriter

    reader = PdfReader(pack)
    total = len(reader.pages)
    starts = [1, *card_firsts]
    spans = [
        list(range(a - 1, b - 1)) for a, b in zip(starts, [*starts[1:], total + 1], strict=True) if b > a
    ]
    writer = PdfWriter()
    forms: dict[int, object] = {}

    def form(index: int):
        if index not in forms:
            forms[index] = _form(writer, reader.pages[index])
        return forms[index]

    for left, right in zip(spans[::2], [*spans[1::2], []], strict=False):
        length = max(len(left), len(right))
        for i in range(length + length % 2):
            a = left[i] if i < len(left) else None
            b = right[i] if i < len(right) else None
            order = (a, b) if i % 2 == 0 else (b, a)  # a long-edge flip swaps left and right
            _sheet(writer, [(slot, form(index)) for slot, index in enumerate(order) if index is not None])
    writer.add_metadata({"/Title": target.stem})
    with open(target, "wb") as f:
        writer.write(f)


def _form(writer, page):
    """A page of another PDF as a form XObject in ``writer``."""
    from pypdf.generic import ArrayObject, DecodedStreamObject, DictionaryObject, FloatObject, NameObject

    contents = page.get_contents()
    stream = DecodedStreamObject()
    stream.set_data(contents.get_data() if contents is not None else b"")
    resources = page.get("/Resources")
    stream.update(
        {
            NameObject("/Type"): NameObject("/XObject"),
            NameObject("/Subtype"): NameObject("/Form"),
            NameObject("/BBox"): ArrayObject([FloatObject(float(x)) for x in page.mediabox]),
            NameObject("/Resources"): resources.get_object().clone(writer)
            if resources is not None
            else DictionaryObject(),
        }
    )
    return writer._add_object(stream)


def _sheet(writer, placed) -> None:
    """An A4 landscape sheet drawing each (slot, form) at slot 0 (left) or 1 (right),
    with the cut marks."""
    from pypdf import PageObject
    from pypdf.generic import DecodedStreamObject, DictionaryObject, NameObject

    width, height = A4_LANDSCAPE
    x = width / 2
    ops = [f"q 1 0 0 1 {slot * A5[0]:.2f} 0 cm /P{slot} Do Q" for slot, _ in placed]
    ops.append(
        f"q 0.5 w 0 G {x:.2f} 0 m {x:.2f} {MARK:.2f} l S {x:.2f} {height - MARK:.2f} m {x:.2f} {height:.2f} l S Q"
    )
    content = DecodedStreamObject()
    content.set_data(" ".join(ops).encode("ascii"))
    sheet = PageObject.create_blank_page(width=width, height=height)
    sheet[NameObject("/Resources")] = DictionaryObject(
        {NameObject("/XObject"): DictionaryObject({NameObject(f"/P{slot}"): ref for slot, ref in placed})}
    )
    sheet[NameObject("/Contents")] = writer._add_object(content)
    writer.add_page(sheet)
