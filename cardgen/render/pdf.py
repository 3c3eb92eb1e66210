"""HTML → PDF with WeasyPrint, reading only the build's own files.

Links in untrusted text are shown as text by the templates; this fetcher is the
second fence: it serves ``file:`` URLs inside the build folder and refuses
everything else (network, data from elsewhere on the disk).
"""

from __future__ import annotations

import contextlib
import gc
import io
import logging
import mimetypes
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit
from urllib.request import url2pathname


def _fetcher_class():
    from weasyprint.urls import URLFetcher, URLFetcherResponse

    class BuildOnlyFetcher(URLFetcher):
        """Serve files under ``root``; refuse every other URL (and remember it)."""

        def __init__(self, root: Path):
            super().__init__(allowed_protocols={"file"}, allow_redirects=False)
            self.root = Path(root).resolve()
            self.refused: list[str] = []

        def fetch(self, url, headers=None):
            parts = urlsplit(url)
            path = Path(url2pathname(parts.path)).resolve() if parts.scheme == "file" else None
            if path is None or (path != self.root and self.root not in path.parents) or not path.is_file():
                self.refused.append(url)
                raise ValueError(f"cardgen renders only the build's own files, not {url[:80]}")
            mime = mimetypes.guess_type(path.name)[0] or "application/octet-stream"
            return URLFetcherResponse(url, path.read_bytes(), {"Content-Type": mime}, 200)

    return BuildOnlyFetcher


def build_only_fetcher(root: Path):
    """A WeasyPrint URL fetcher restricted to the files under ``root``."""
    return _fetcher_class()(root)


def parts_pdf(parts: tuple[str, ...], base: Path) -> bytes:
    """One PDF of a document laid out part by part (each an HTML page of its own,
    links into ``base``) and joined in order: a layout holds every page of its
    document in memory, so a coach sheet of hundreds of riders is laid out a few
    groups at a time (one layout of 300 riders peaked at 1.2 GB). The tags (the
    structure for screen readers) are those of the first part."""
    import pikepdf

    out = io.BytesIO()
    with contextlib.ExitStack() as stack:  # a part stays open until the join is saved
        joined = stack.enter_context(pikepdf.open(io.BytesIO(pdf_bytes(parts[0], base)[0])))
        for html in parts[1:]:
            part = stack.enter_context(pikepdf.open(io.BytesIO(pdf_bytes(html, base)[0])))
            joined.pages.extend(part.pages)
        joined.save(out, deterministic_id=True)
    return out.getvalue()


def pdf_bytes(html: str, base: Path) -> tuple[bytes, list[str]]:
    """Render ``html`` (whose relative links point into ``base``) as a tagged PDF
    (structure for screen readers; its language and title from the HTML).

    Returns the PDF and the URLs that were refused (nothing is fetched from outside
    ``base``).
    """
    from weasyprint import HTML

    # WeasyPrint reports refused resources and unsupported CSS as log warnings; the
    # fetcher already records refusals, so keep its log quiet on the terminal.
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    fetcher = build_only_fetcher(base)
    data = HTML(string=html, base_url=base.resolve().as_uri() + "/", url_fetcher=fetcher).write_pdf(
        pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True
    )
    return data, fetcher.refused


class Fitter:
    """Chooses each card's variant with as few WeasyPrint layouts as it can, learning
    from the cards it has laid out.

    Cards of one group (one route, card size and vehicle kind: ``group`` of
    :meth:`fit`) differ only by the rider's own notices and figures, so a variant that
    overflowed for one card overflows for every card of the group whose HTML is no
    shorter. The variants are tried from the least condensed; a variant is skipped
    only when a card of the group with no longer HTML has already overflowed it.
    The first variant tried that fits is written, from the very layout that was
    measured (the check and the printed card are the same pages); when none fits,
    the last is written. Continuation variants (twice the budget, ended on a whole
    sheet) repeat the HTML of the steps before them: a step measured within the budget
    is not laid out again, and the first layout within twice the budget is kept for
    them.

    The rule is a prediction only in one direction: it may skip a variant that
    would have fitted a card with fewer but longer words (the card is then condensed
    one step more than it needs), never print a card over its budget.

    One fitter serves the cards of one process: drawings that every card of a route
    shows alike are parsed once (WeasyPrint's image ``cache``).
    """

    def __init__(self, overflowed: dict | None = None) -> None:
        #: group → variant index → the shortest HTML (characters) seen to overflow it
        #: (``overflowed``: what earlier fitters of the build learned, to start from)
        self.overflowed: dict[object, dict[int, int]] = {g: dict(v) for g, v in (overflowed or {}).items()}
        self.cache: dict = {}
        self.layouts = 0

    def _skip(self, group, index: int, html: str) -> bool:
        shortest = self.overflowed.get(group, {}).get(index)
        return shortest is not None and len(html) >= shortest

    def _learn(self, group, index: int, html: str) -> None:
        seen = self.overflowed.setdefault(group, {})
        seen[index] = min(seen.get(index, len(html)), len(html))

    def fit(
        self, variants, base: Path, budget: int, group=None, continued_from: int | None = None
    ) -> tuple[bytes, int, int]:
        """The PDF of the first variant of a card whose layout is within its page
        limit (the last when none is): ``budget`` pages, or twice that for the
        variants from ``continued_from`` on (default: the last alone), which carry a
        continuation sheet and end on a whole sheet. A variant whose HTML is the same
        as an earlier one's is not laid out again. Returns (PDF, variant index, pages)."""
        last = len(variants) - 1
        continued = last if continued_from is None else continued_from
        pages_of: dict[str, int] = {}  # HTML → pages of its layout in this call
        spare: tuple[str, Any] | None = None  # the first layout within twice the budget
        for index, html in enumerate(variants):
            limit = 2 * budget if index >= continued else budget
            if index < last and self._skip(group, index, html):
                continue
            if spare is not None and html == spare[0] and pages_of[html] <= limit:
                document, pages = spare[1], pages_of[html]
                break
            if html in pages_of and pages_of[html] > limit and index < last:
                self._learn(group, index, html)
                continue
            document = self._layout(html, base)
            pages = pages_of[html] = len(document.pages)
            if pages <= limit or index == last:
                break
            self._learn(group, index, html)
            if spare is None and pages <= 2 * budget:
                spare = (html, document)
        with _quiet_collector():
            data = document.write_pdf(
                pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True, cache=self.cache
            )
        if index >= continued and pages % 2:  # the continuation is a whole sheet: end on a back page
            data = _add_blank_page(data)
            pages += 1
        return data, index, pages

    def _layout(self, html: str, base: Path):
        """One WeasyPrint layout of ``html`` (links into ``base``), counted."""
        from weasyprint import HTML

        logging.getLogger("weasyprint").setLevel(logging.ERROR)
        with _quiet_collector():
            document = HTML(
                string=html, base_url=base.resolve().as_uri() + "/", url_fetcher=build_only_fetcher(base)
            ).render(pdf_tags=True, cache=self.cache)
        self.layouts += 1
        return document


@contextlib.contextmanager
def _quiet_collector() -> Iterator[None]:
    """Python's cyclic garbage collector paused while WeasyPrint builds a layout (it
    makes hundreds of thousands of short-lived objects; collecting between them costs
    about a third of the time), and run once after."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()
            gc.collect(1)


def _add_blank_page(data: bytes) -> bytes:
    """Append one blank page of the last page's size (a card's continuation sheet
    ends on a back page of its own)."""
    import pikepdf

    out = io.BytesIO()
    with pikepdf.open(io.BytesIO(data)) as pdf:
        box = pdf.pages[-1].mediabox
        pdf.add_blank_page(page_size=(float(box[2]) - float(box[0]), float(box[3]) - float(box[1])))
        pdf.save(out, deterministic_id=True)
    return out.getvalue()
