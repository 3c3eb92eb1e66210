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
import math
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
    structure for screen readers) are those of the first part (:func:`join_parts`)."""
    return join_parts(pdf_bytes(html, base)[0] for html in parts)


def join_parts(datas) -> bytes:
    """The PDFs ``datas`` (bytes, in order) joined into one: the first part's
    document (its title, language and tags) with every later part's pages added. A
    part stays open until the join is saved. The same parts give the same bytes,
    whichever process laid them out."""
    import pikepdf

    out = io.BytesIO()
    with contextlib.ExitStack() as stack:  # a part stays open until the join is saved
        parts = iter(datas)
        joined = stack.enter_context(pikepdf.open(io.BytesIO(next(parts))))
        for data in parts:
            part = stack.enter_context(pikepdf.open(io.BytesIO(data)))
            joined.pages.extend(part.pages)
        joined.save(out, deterministic_id=True)
    return out.getvalue()


def layout(html: str, base: Path, cache=None, fetcher=None):
    """One WeasyPrint layout of ``html`` (whose relative links point into ``base``,
    served by ``fetcher``, by default :func:`build_only_fetcher`), as a tagged PDF
    document (structure for screen readers; its language and title from the HTML)."""
    from weasyprint import HTML

    # WeasyPrint reports refused resources and unsupported CSS as log warnings; the
    # fetcher already records refusals, so keep its log quiet on the terminal.
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    return HTML(
        string=html, base_url=base.resolve().as_uri() + "/", url_fetcher=fetcher or build_only_fetcher(base)
    ).render(pdf_tags=True, cache=cache)


def written(document, cache=None) -> bytes:
    """The PDF of a :func:`layout`, with cardgen's fixed identifier (the same card
    gives the same bytes)."""
    return document.write_pdf(pdf_identifier=b"cardgen", uncompressed_pdf=False, pdf_tags=True, cache=cache)


def pdf_bytes(html: str, base: Path) -> tuple[bytes, list[str]]:
    """Render ``html`` (whose relative links point into ``base``) as a tagged PDF.

    Returns the PDF and the URLs that were refused (nothing is fetched from outside
    ``base``).
    """
    fetcher = build_only_fetcher(base)
    return written(layout(html, base, fetcher=fetcher)), fetcher.refused


#: How far (in pages) a variant's predicted extent must pass its page limit for the
#: fitter to take its overflow as known without laying it out.
PREDICTION_MARGIN = 0.05


class Fitter:
    """Chooses each card's variant (the least condensed whose layout is within its
    page limit) with one WeasyPrint layout in the common case, learning from the
    cards it has laid out.

    Cards of one group (one route, card size and vehicle kind: ``group`` of
    :meth:`fit`) share their tables, cues and drawings and differ by the rider's
    notes and figures, so the variants of one card differ from each other by nearly
    the same height on every card of the group. The rule:

    1. The first card of a group is laid out from the least condensed variant on,
       until one fits. From it the fitter learns, for each variant ``j`` it laid out
       before the one after it, the *extent step* ``X[j] - X[j + 1]``, where the
       extent ``X`` of a layout is the sum of its pages' filled shares (:func:`extent`:
       the gap a page leaves when its next row does not fit is not counted, so a
       layout whose extent passes its limit cannot fit); and the variant chosen.
    2. A later card of the group starts from the variant most cards of the group have
       chosen (of those tied, the least condensed), and steps on while it overflows
       (learning, as above). The first card of a group starts from what the route's
       cards of other groups (same ``base``) chose, and uses their steps.
    3. When a variant ``i`` fits, the one before it overflows if its extent, predicted
       as ``X[i]`` plus the least step the group (else the route) has shown, passes its page limit by
       more than :data:`PREDICTION_MARGIN`, or if the card is at least as large as a
       card of its group seen to overflow there (:func:`predicted_over`: the
       measured extent and the text the variant adds); the card then takes that one
       layout. Otherwise the variant before is laid out, and taken when it fits (and
       so on back). Stepping on (2), a variant the card is at least as large as a
       card seen to overflow there is passed over (never the last). A variant with the
       same HTML as one already laid out is never laid out again.

    The printed PDF is written from the layout that was measured. Continuation
    variants (twice the budget, ended on a whole sheet) repeat the HTML of the steps
    before them. ``tests/test_fitter_choice.py`` lays out the next less condensed
    variant of sampled cards to see it overflow.

    One fitter serves the cards of one process: drawings that every card of a route
    shows alike are parsed once (WeasyPrint's image ``cache``).
    """

    def __init__(self, learned: dict | None = None) -> None:
        #: group → {"steps": {variant j: least extent step X[j] − X[j+1] seen
        #: [pages]}, "chosen": {variant: cards}, "sizes": (:func:`predicted_over`)}
        #: (``learned``: what earlier fitters of the build learned, to start from:
        #: :func:`merge_learned`)
        self.learned: dict = merge_learned({}, learned or {})
        #: the counts of chosen variants it was handed (:meth:`news` leaves them out)
        self._handed = {group: dict(seen["chosen"]) for group, seen in self.learned.items()}
        self.cache: dict = {}
        self.layouts = 0

    def news(self) -> dict:
        """What this fitter has to tell the build, which adds up the reports of its
        fitters (:func:`merge_learned`): its steps and sizes (least and largest seen,
        so that repeating what it was handed changes nothing) and the cards it chose
        itself, without the counts it was handed (those the build has already)."""
        report = {}
        for group, seen in self.learned.items():
            handed = self._handed.get(group, {})
            chosen = {v: n - handed.get(v, 0) for v, n in seen["chosen"].items() if n > handed.get(v, 0)}
            report[group] = {**seen, "chosen": chosen}
        return report

    def fit(
        self, variants, base: Path, budget: int, group=None, continued_from: int | None = None
    ) -> tuple[bytes, int, int]:
        """The PDF of the least condensed variant of a card whose layout is within its
        page limit (the last when none is): ``budget`` pages, or twice that for the
        variants from ``continued_from`` on (default: the last alone), which carry a
        continuation sheet and end on a whole sheet. Returns (PDF, variant index,
        pages)."""
        last = len(variants) - 1
        continued = last if continued_from is None else continued_from
        limits = [2 * budget if i >= continued else budget for i in range(len(variants))]
        laid: dict[str, tuple[Any, int, float]] = {}  # HTML → (layout, pages, extent)

        def layout(index: int) -> tuple[Any, int, float]:
            html = variants[index]
            if html not in laid:
                document = self._layout(html, base)
                laid[html] = (document, len(document.pages), extent(document))
            return laid[html]

        known = self.learned.setdefault(group, {"steps": {}, "chosen": {}})
        # the route's cards of every kind (they share the route's tables and drawings)
        # guide a kind's first card
        route = self.learned.setdefault(("route", str(base)), {"steps": {}, "chosen": {}})
        steps = {**route["steps"], **known["steps"]}
        chosen = known["chosen"] or route["chosen"]
        sizes = known.setdefault("sizes", {})

        def over(measured: int, target: int) -> bool:  # known to overflow without a layout
            if variants[target] in laid:
                return False
            x = layout(measured)[2]
            step = steps.get(target) if target == measured - 1 else None
            if step is not None and x + step - PREDICTION_MARGIN > limits[target]:
                return True
            size = (x, len(variants[target]) - len(variants[measured]))
            return predicted_over(sizes, (measured, target), size)

        index = min(min(chosen, key=lambda v: (-chosen[v], v)) if chosen else 0, last)
        while layout(index)[1] > limits[index] and index < last:  # 2: step on while it overflows
            measured, index = index, index + 1
            while index < last and over(measured, index):
                index += 1
        while index > 0 and layout(index)[1] <= limits[index]:  # 3: back while the one before fits
            before = index - 1
            if over(index, before) or layout(before)[1] > limits[before]:
                break
            index = before
        for table in (known, route):  # 1: what this card showed
            _learn_steps(table, variants, laid, index)
        _learn_sizes(sizes, variants, laid, limits)
        document, pages, _ = layout(index)
        with _quiet_collector():
            data = written(document, self.cache)
        if index >= continued and pages % 2:  # the continuation is a whole sheet: end on a back page
            data = _add_blank_page(data)
            pages += 1
        return data, index, pages

    def _layout(self, html: str, base: Path):
        """One WeasyPrint layout of ``html`` (links into ``base``), counted."""
        with _quiet_collector():
            document = layout(html, base, self.cache)
        self.layouts += 1
        return document


def _learn_steps(table: dict, variants, laid: dict, chosen: int) -> None:
    """Add a card's extent steps (between variants laid out one after the other) and
    its chosen variant to ``table`` (:attr:`Fitter.learned` of a group or route)."""
    for j in range(len(variants) - 1):
        a, b = variants[j], variants[j + 1]
        if a != b and a in laid and b in laid:
            table["steps"][j] = min(table["steps"].get(j, math.inf), laid[a][2] - laid[b][2])
    table["chosen"][chosen] = table["chosen"].get(chosen, 0) + 1


def merge_learned(learned: dict, more: dict) -> dict:
    """Add what a fitter learned (``more``, :attr:`Fitter.learned`) to ``learned``
    (changed and returned): per group, the least extent step of each variant and the
    count of cards that chose each variant."""
    for group, seen in more.items():
        mine = learned.setdefault(group, {"steps": {}, "chosen": {}})
        for j, step in seen["steps"].items():
            mine["steps"][j] = min(mine["steps"].get(j, math.inf), step)
        for v, cards in seen["chosen"].items():
            mine["chosen"][v] = mine["chosen"].get(v, 0) + cards
        for pair, points in seen.get("sizes", {}).items():
            for outcome, kept in points.items():
                for size in kept:
                    _keep(
                        mine.setdefault("sizes", {}).setdefault(pair, {"over": [], "fit": []}), outcome, size
                    )
    return learned


def predicted_over(sizes: dict, pair: tuple[int, int], size: tuple[float, int]) -> bool:
    """Whether variant ``t`` of a card overflows its page limit, judged without laying
    it out from the card's layout of variant ``m`` (``pair`` = (m, t)) and what other
    cards of its group showed.

    A card's *size* for the pair is (the extent ``X[m]`` of its layout of ``m``
    [pages], the characters variant ``t``'s HTML has more than ``m``'s). Cards of one
    group share their tables, cues and drawings, so a card at least as large as
    another in both (more content at ``m``, and at least as much added by ``t``) has
    at least as much content at ``t``. ``t`` is taken to overflow when some card of
    the group whose size is at most this card's overflowed at ``t``, and no card of
    at least this card's size fitted there (where the group has shown both, the
    layouts do not grow with size there, and ``t`` is laid out). ``sizes`` holds,
    per pair, the least sizes seen to overflow and the largest seen to fit
    (:func:`_learn_sizes`). Page breaks make the extent at which a variant overflows
    vary by a few hundredths of a page between cards (a card of 1.94 pages that
    overflows two beside one of 1.96 that fits), which a margin on the extent alone
    cannot tell apart; the card's own size against its group's can."""
    seen = sizes.get(pair)
    if not seen:
        return False
    x, d = size
    below = any(px <= x and pd <= d for px, pd in seen["over"])
    return below and not any(qx >= x and qd >= d for qx, qd in seen["fit"])


def _learn_sizes(sizes: dict, variants, laid: dict, limits: list[int]) -> None:
    """Add a card's outcomes to ``sizes`` (:func:`predicted_over`): for every two of
    its variants with different HTML that were laid out, measured ``m`` and target
    ``t``, the card's size and whether ``t`` was within its limit."""
    for m, measured in enumerate(variants):
        for t, target in enumerate(variants):
            if measured == target or measured not in laid or target not in laid:
                continue
            outcome = "fit" if laid[target][1] <= limits[t] else "over"
            size = (laid[measured][2], len(target) - len(measured))
            _keep(sizes.setdefault((m, t), {"over": [], "fit": []}), outcome, size)


def _keep(points: dict, outcome: str, size: tuple[float, int]) -> None:
    """Add ``size`` to ``points[outcome]``, keeping only the least sizes that
    overflowed and the largest that fitted (the others decide nothing)."""
    kept = points[outcome]
    sign = 1 if outcome == "over" else -1  # "over": keep the minima; "fit": the maxima

    def covers(a, b) -> bool:  # a decides at least what b does
        return sign * (b[0] - a[0]) >= 0 and sign * (b[1] - a[1]) >= 0

    if any(covers(p, size) for p in kept):
        return
    kept[:] = [p for p in kept if not covers(size, p)] + [tuple(size)]


def extent(document) -> float:
    """How much a layout holds, in pages: the sum over its pages of the share of the
    content height down to the bottom of the page's lowest text line, drawing or
    other innermost box (the running header and footer are in the margins). The
    space a page leaves below its last row when the next one does not fit is not
    counted, so the difference between two variants of a card is the height their
    content differs by, and a layout whose content passes ``n`` pages cannot fit in
    ``n``."""
    total = 0.0
    for page in document.pages:
        box = page._page_box
        top = box.content_box_y()
        bottom = top
        stack = [c for c in box.children if getattr(c, "element_tag", None) == "html"]
        while stack:
            child = stack.pop()
            inner = getattr(child, "children", None)
            if inner:
                stack.extend(inner)
            else:
                bottom = max(bottom, child.position_y + child.margin_height())
        total += (bottom - top) / box.height
    return total


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
