"""HTML → PDF with WeasyPrint, reading only the build's own files.

Links in untrusted text are shown as text by the templates; this fetcher is the
second fence: it serves ``file:`` URLs inside the build folder and refuses
everything else (network, data from elsewhere on the disk).
"""

from __future__ import annotations

import logging
import mimetypes
from pathlib import Path
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


def write_pdf(html: str, base: Path, target: Path) -> list[str]:
    """Render ``html`` (whose relative links point into ``base``) to ``target``.

    Returns the URLs that were refused (nothing is fetched from outside ``base``).
    """
    from weasyprint import HTML

    # WeasyPrint reports refused resources and unsupported CSS as log warnings; the
    # fetcher already records refusals, so keep its log quiet on the terminal.
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    fetcher = build_only_fetcher(base)
    HTML(string=html, base_url=base.resolve().as_uri() + "/", url_fetcher=fetcher).write_pdf(
        target, pdf_identifier=b"cardgen", uncompressed_pdf=False
    )
    return fetcher.refused
