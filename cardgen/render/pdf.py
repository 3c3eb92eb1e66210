"""HTML → PDF with WeasyPrint, reading only the build's own files.

Links in untrusted text are shown as text by the templates; this fetcher is the
second fence: it serves ``file:`` URLs inside the build folder and refuses
everything else (network, data from elsewhere on the disk).
"""

from __future__ import annotations

import io
import logging
import mimetypes
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


def fitting_pdf(variants, base: Path, budget: int) -> tuple[bytes, int, int]:
    """The PDF of the least condensed variant of a card whose layout is within
    ``budget`` pages; when none of them fits, the last (the cue sheet on a continuation
    sheet: up to twice the budget, padded to whole sheets). Returns (PDF, variant
    index, pages).

    Condensing never adds pages, so the variants are searched by halving: at most
    three layouts for five variants. The layout written is the one measured: the
    check and the printed card are the same pages.
    """
    from weasyprint import HTML

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    fetcher = build_only_fetcher(base)
    url = base.resolve().as_uri() + "/"
    last = len(variants) - 1
    laid: dict[int, Any] = {}

    def layout(index: int):
        if index not in laid:
            laid[index] = HTML(string=variants[index], base_url=url, url_fetcher=fetcher).render(
                pdf_tags=True
            )
        return laid[index]

    def fits(index: int) -> bool:
        return len(layout(index).pages) <= budget

    lo, hi = 0, last  # the answer lies in lo..hi; the last variant is always taken
    while lo < hi:
        mid = (lo + hi) // 2
        if fits(mid):
            hi = mid
        else:
            lo = mid + 1
    document = layout(lo)
    pages = len(document.pages)
    data = document.write_pdf(pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True)
    if lo == last and pages % 2:  # the continuation is a whole sheet: end on a back page
        data = _add_blank_page(data)
        pages += 1
    return data, lo, pages


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
