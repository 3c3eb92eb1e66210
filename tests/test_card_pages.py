"""Card pages read back from the PDFs (poppler's word boxes): the running header's
"page N of M" counts the card's own pages (a blank page that pads a card to a whole
sheet is no card page: it carries nothing, header included), alike in a card's file
and in the print pack; and the cautions come whole, on the card's last page with
something of the card above them (never a page of cautions alone)."""

from __future__ import annotations

import html
import itertools
import re
import shutil
from pathlib import Path

import pytest
from test_sheets import _words

from cardgen.render.pages import page_geometry

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils is not installed"),
]
MM = 72 / 25.4
HEADER = re.compile(r"page (\d+) of (\d+)$")


def _cards(out: Path) -> list[Path]:
    return sorted(p for p in out.glob("*/*.pdf") if p.stem not in ("coach", "all-cards", "all-cards-2up"))


def _header(page, top_pt: float) -> tuple[int, int] | None:
    """(N, M) of the page's "page N of M" in its top margin, or None."""
    line = " ".join(w[4] for w in page if w[3] <= top_pt)
    found = HEADER.search(line)
    return (int(found[1]), int(found[2])) if found else None


def check_page_counts(pdf: Path, top_pt: float) -> list[int]:
    """The card page count M of each card in ``pdf`` (one card, or a pack of cards
    after its cover), checking that each card's headers run 1..M and that every page
    without a header is blank."""
    counts: list[int] = []
    expected = None  # the next page number of the card being read
    for number, page in enumerate(_words(pdf), 1):
        header = _header(page, top_pt)
        if header is None:
            if expected is None and counts:  # a pad page after a card: nothing on it
                assert page == [], f"{pdf.name} page {number}: text on a page without a header"
            continue
        n, m = header
        if n == 1:
            assert expected is None, f"{pdf.name} page {number}: a card began inside another"
            counts.append(m)
        assert n == (expected or 1) and n <= m, f"{pdf.name} page {number}: page {n} of {m}"
        expected = None if n == m else n + 1
    assert expected is None, f"{pdf.name}: a card ended before its last page"
    return counts


@pytest.mark.parametrize("site", ["demo_site", "large_print_demo"])
def test_page_n_of_m_counts_the_cards_own_pages(site, request):
    config, out, _ = request.getfixturevalue(site)
    top = float(page_geometry(config.card_size, config.large_print)["margins"].split("mm")[0]) * MM
    padded = 0
    for pdf in _cards(out):
        words = _words(pdf)
        (m,) = check_page_counts(pdf, top)
        assert m == sum(1 for page in words if page), pdf  # M: the pages with anything on them
        padded += len(words) - m
    # the large-print demo has cards padded to a whole sheet (the day ride's; in A5 it
    # fits its two pages)
    assert padded > 0 or not config.large_print
    for pack in sorted(out.glob("*/all-cards.pdf")):
        singles = [
            len([p for p in _words(c) if p]) for c in sorted(pack.parent.glob("*.pdf")) if c in _cards(out)
        ]
        assert sorted(check_page_counts(pack, top)) == sorted(singles), pack


def check_cautions(pdf: Path, top_pt: float) -> None:
    """The cautions' heading ("Before you ride") is on the card's last page with text,
    below something of the card's own (not at the top of the page)."""
    pages = [p for p in _words(pdf) if p]
    at = [
        (i, w)
        for i, page in enumerate(pages)
        for k, w in enumerate(page[:-2])
        if (w[4], page[k + 1][4], page[k + 2][4]) == ("Before", "you", "ride")
    ]
    assert len(at) == 1, f"{pdf.name}: the cautions' heading {len(at)} times"
    i, heading = at[0]
    assert i == len(pages) - 1, f"{pdf.name}: cautions on page {i + 1} of {len(pages)}: split or early"
    above = [w for w in pages[i] if w[1] > top_pt and w[3] < heading[1]]
    assert above, f"{pdf.name}: page {i + 1} holds only the cautions"


@pytest.mark.parametrize("site", ["demo_site", "large_print_demo"])
def test_the_cautions_are_whole_and_never_alone_on_a_page(site, request):
    config, out, _ = request.getfixturevalue(site)
    top = float(page_geometry(config.card_size, config.large_print)["margins"].split("mm")[0]) * MM
    for pdf in _cards(out):
        check_cautions(pdf, top)


def test_a_coach_sheet_fills_its_pages(tmp_path):
    """Eight riders (one group) on the demo's hill loop: the climb and notes tables run
    on from the riders' table, row by row with their heads repeated, instead of each
    starting a page (with each table kept whole the sheet took 3 pages). Fill: the
    lowest word above the running cautions (32 mm bottom margin)."""
    from test_fitter_choice import _event, rendered
    from test_sheets import _fill

    from cardgen.render.pdf import pdf_bytes

    pages, folder = rendered(_event(tmp_path, "hill-loop.gpx", 8), tmp_path)
    (coach,) = [c for c in pages.cards if not c.variants]
    pdf = folder / "coach.pdf"
    pdf.write_bytes(pdf_bytes(coach.html, folder)[0])
    fill = _fill(pdf, 10, 32)
    assert len(fill) == 2
    assert fill[0] > 0.9
    second = " ".join(w[4] for w in _words(pdf)[1][:60])
    assert "Rider" in second  # the page goes on under a table's repeated head


def test_a_coach_sheets_climb_tables_line_up_and_nothing_overflows(tmp_path):
    """The coach sheet's climb tables take stated column widths (``table-layout:
    fixed``, no measuring of every cell): every climb table's heads stand at the same
    places, and no word runs into its neighbour on any line (a figure wider than its
    column would print over the next one). Eight riders on the demo's day ride, three
    climbs."""
    from test_fitter_choice import _event, rendered

    from cardgen.render.pdf import pdf_bytes

    pages, folder = rendered(_event(tmp_path, "day-ride.gpx", 8), tmp_path)
    (coach,) = [c for c in pages.cards if not c.variants]
    pdf = folder / "coach.pdf"
    pdf.write_bytes(pdf_bytes(coach.html, folder)[0])
    heads = {name: set() for name in ("Speed", "Time", "Assist", "Plan", "Notes")}
    climbs = 0
    for page in _words(pdf):
        lines: dict[float, list] = {}
        for word in page:
            lines.setdefault(round(word[1], 1), []).append(word)
        for line in lines.values():
            line.sort()
            texts = [w[4] for w in line]
            if texts[:3] == ["Rider", "W", "for"]:  # a climb table's head
                climbs += 1
                for word in line:
                    if word[4] in heads:
                        heads[word[4]].add(round(word[0], 1))
            for left, right in itertools.pairwise(line):
                assert left[2] <= right[0] + 0.01, f"{left[4]!r} runs into {right[4]!r}"
    assert climbs >= 3
    assert all(len(places) == 1 for places in heads.values()), heads


# -- page breaks that read well -------------------------------------------------------

#: The running footer's phrases: a line may end after any of them, never inside one
#: (the A5 footer once ended a line on "cautions: at the" with "end" alone below).
FOOTER_PHRASES = (
    "Model estimates, not guarantees ·",
    "roads open to traffic:",
    "local road rules apply ·",
    "cautions: at the end",
)
#: At least this many rows of the cue sheet on the page that ends it, when it began
#: on an earlier page (the finish is never carried over alone).
CUE_TAIL_ROWS = 2
ROW = re.compile(r"[\d.]+ (km|mi) .* \d\d:\d\d$")


def _lines(page) -> list[str]:
    """A page's text lines, top to bottom: words whose tops are within 1 pt, in x order
    (XML entities of the word boxes read back as their characters)."""
    lines: list[list] = []
    for word in sorted(page, key=lambda w: (w[1], w[0])):
        if lines and abs(lines[-1][0][1] - word[1]) < 1:
            lines[-1].append(word)
        else:
            lines.append([word])
    return [html.unescape(" ".join(w[4] for w in sorted(line))) for line in lines]


def break_problems(pdf: Path) -> list[str]:
    """What reads badly at the page breaks of a card: a footer line broken inside a
    phrase; a cue sheet whose last page holds fewer than :data:`CUE_TAIL_ROWS` of its
    rows; the food table away from its heading, or its guide away from its last row
    (the table's rows may run on to the next page, but not away from either)."""
    problems = []
    for number, page in enumerate((p for p in _words(pdf) if p), 1):
        lines = _lines(page)
        text = " ".join(lines)
        footer = [line for line in lines if any(w in line for w in ("guarantees", "road rules", "cautions:"))]
        for phrase in FOOTER_PHRASES:
            if not any(phrase in line for line in footer):
                problems.append(f"page {number}: footer phrase {phrase!r} broken: {footer}")
        finish = [i for i, line in enumerate(lines) if re.fullmatch(r"[\d.]+ (km|mi) Finish \d\d:\d\d", line)]
        if finish and "Cue sheet" not in text:
            head = max(i for i, line in enumerate(lines[: finish[0]]) if line.startswith("At Cue Next"))
            rows = [line for line in lines[head + 1 : finish[0] + 1] if ROW.fullmatch(line)]
            if len(rows) < CUE_TAIL_ROWS:
                problems.append(f"page {number}: the cue sheet ends with {len(rows)} row(s): {rows}")
        # the heading over the table's head and first row; the guide whole, after a row
        if "Food and fluids" in text and not re.search(r"Food and fluids Leg to [^·]*? L\b", text):
            problems.append(f"page {number}: the food heading without its table")
        if "A starting guide" in text and not re.search(r" L A starting guide.* clinician's plan\.", text):
            problems.append(f"page {number}: the food guide away from its table, or split")
    return problems


@pytest.mark.parametrize("site", ["demo_site", "large_print_demo"])
def test_page_breaks_read_well(site, request):
    """Every card of the demo, in its A5 print and in large print, read back from the
    PDF. Before this, on the A5 demo: every footer broke "cautions: at the / end",
    the handcycle's cue sheet carried its Finish row alone on to page 2, and the cargo
    bike's food table stood on page 1 with its guide on page 2."""
    _, out, _ = request.getfixturevalue(site)
    cards = _cards(out)
    assert len(cards) == 9
    found = {card.relative_to(out).as_posix(): break_problems(card) for card in cards}
    assert not any(found.values()), {k: v for k, v in found.items() if v}
