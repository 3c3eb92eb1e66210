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


def make_pack(
    entries: Sequence[PackEntry], cover_html, base: Path, title: str, page_size: tuple[float, float]
) -> tuple[bytes, list[int]]:
    """The pack of ``entries`` (already in print order), titled ``title``.

    ``cover_html(rows)`` renders the cover for rows of (entry, first page) to HTML;
    the cover is rendered once, and again if its own length moved the page numbers.
    Returns the pack and the first page of each card. The cards' pages are copied by qpdf
    (pikepdf), which neither parses their content nor their tagging.
    """
    import pikepdf

    from cardgen.render.pdf import pdf_bytes

    opened = [pikepdf.open(e.pdf) for e in entries]
    out = io.BytesIO()
    try:
        counts = [len(pdf.pages) for pdf in opened]
        cover_pages = 2
        for _ in range(3):
            firsts, page = [], cover_pages + 1
            for n in counts:
                firsts.append(page)
                page += n + n % 2
            cover, _ = pdf_bytes(cover_html(list(zip(entries, firsts, strict=True))), base)
            with pikepdf.open(io.BytesIO(cover)) as front:
                length = len(front.pages)
            if length + length % 2 == cover_pages:
                break
            cover_pages = length + length % 2
        with pikepdf.open(io.BytesIO(cover)) as front, pikepdf.new() as pack:
            for source in [front, *opened]:
                pack.pages.extend(source.pages)
                if len(source.pages) % 2:
                    pack.add_blank_page(page_size=page_size)
            pack.docinfo["/Title"] = title
            pack.save(out, deterministic_id=True)
    finally:
        for pdf in opened:
            pdf.close()
    return out.getvalue(), firsts


def impose_two_up(pack: bytes, title: str, card_firsts: Sequence[int]) -> bytes:
    """Two A5 pages on each A4 landscape sheet, cards paired for cut-and-stack (see
    the module notes). ``card_firsts`` are the 1-based first pages of the cards; the
    cover (the pages before the first card) is paired like a card.

    Each A5 page is drawn on its sheet as a form XObject (ISO 32000-1 §8.10), so its
    content is copied, not parsed."""
    import pikepdf

    data = io.BytesIO()
    with pikepdf.open(io.BytesIO(pack)) as source, pikepdf.new() as out:
        total = len(source.pages)
        starts = [1, *card_firsts]
        spans = [
            list(range(a - 1, b - 1)) for a, b in zip(starts, [*starts[1:], total + 1], strict=True) if b > a
        ]
        width, height = A4_LANDSCAPE
        for left, right in zip(spans[::2], [*spans[1::2], []], strict=False):
            length = max(len(left), len(right))
            for i in range(length + length % 2):
                a = left[i] if i < len(left) else None
                b = right[i] if i < len(right) else None
                order = (a, b) if i % 2 == 0 else (b, a)  # a short-edge flip swaps left and right
                sheet = out.add_blank_page(page_size=(width, height))
                forms, ops = pikepdf.Dictionary(), []
                for slot, index in enumerate(order):
                    if index is not None:  # fixed names, so the same input gives the same bytes
                        forms[f"/P{slot}"] = out.copy_foreign(source.pages[index].as_form_xobject())
                        ops.append(f"q 1 0 0 1 {slot * A5[0]:.2f} 0 cm /P{slot} Do Q")
                ops.append(
                    f"q 0.5 w 0 G {width / 2:.2f} 0 m {width / 2:.2f} {MARK:.2f} l S "
                    f"{width / 2:.2f} {height - MARK:.2f} m {width / 2:.2f} {height:.2f} l S Q"
                )
                sheet.obj.Resources = pikepdf.Dictionary(XObject=forms)
                sheet.obj.Contents = out.make_stream(" ".join(ops).encode("ascii"))
        out.docinfo["/Title"] = title
        out.save(data, deterministic_id=True)
    return data.getvalue()
