"""Cards that use their sheets, read back from the PDFs: a card that needs a
continuation sheet fills its first sheet first; the e-assist levels never add a page;
a short outing in large print keeps within its four pages with a map that reads at
the card's type size; nothing the build prints is set below 7.5 pt."""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from buildkit import font_sizes
from gpxmaker import long_route
from pypdf import PdfReader

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.render.pages import page_geometry

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils is not installed"),
]
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
MM = 72 / 25.4


def _words(pdf: Path) -> list[list[tuple[float, float, float, float, str]]]:
    """Each page's words as (x0, y0, x1, y1, text) in points, from poppler's pdftotext -bbox."""
    xml = subprocess.run(
        ["pdftotext", "-bbox", str(pdf), "-"], capture_output=True, text=True, check=True
    ).stdout
    pages = []
    for page in xml.split("<page ")[1:]:
        pages.append(
            [
                (*map(float, m.groups()[:4]), m.group(5))
                for m in re.finditer(
                    r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)<', page
                )
            ]
        )
    return pages


def _fill(pdf: Path, top_mm: float, bottom_mm: float) -> list[float]:
    """How far down its text area each page is written: the lowest word above the
    page's bottom margin (the running footer sits in the margin), as a share of the
    text area's height; 0 for an empty page."""
    height = float(PdfReader(pdf).pages[0].mediabox.height)
    top, bottom = top_mm * MM, height - bottom_mm * MM
    return [
        max(
            ((y1 - top) / (bottom - top) for _, y0, _, y1, _ in page if top < y0 and y1 < bottom), default=0.0
        )
        for page in _words(pdf)
    ]


def _cards(folder: Path) -> list[Path]:
    return sorted(p for p in folder.glob("*.pdf") if p.stem not in ("coach", "all-cards", "all-cards-2up"))


# -- the demo: every PDF, and the day ride's continued card ---------------------------


def test_nothing_the_demo_prints_is_below_7_5_pt(demo_site):
    """Every PDF of the demo: the cards, the coach sheets, the day sheet and the print
    packs (with their covers and the two-up sheets)."""
    config, out, _ = demo_site
    pdfs = sorted(out.rglob("*.pdf"))
    names = {p.name for p in pdfs}
    # a card per rider, and per route a coach sheet and two packs; the day sheet and
    # the two packs of the whole event
    cards = sum(1 for rc in config.routes for r in config.riders if r.rides(rc, rc.name or rc.gpx.stem))
    assert {"coach.pdf", "day-sheet.pdf", "all-cards.pdf", "all-cards-2up.pdf"} <= names
    assert len(pdfs) == cards + 3 * len(config.routes) + 3
    for pdf in pdfs:
        sizes = font_sizes(pdf)
        assert sizes and min(sizes) >= 7.5 - 0.05, (pdf.relative_to(out), sorted(sizes.items())[:3])


def test_a_card_fills_its_first_sheet_before_a_continuation(demo_site, large_print_demo):
    """The demo's cards, A5 and large print (margins from ``page_geometry``): a card of
    more than its budget runs on from its last page within budget (its cue sheet is
    not moved to a sheet of its own): the cue sheet starts by then, and the page before
    the continuation is written at least 90 % of the way down unless the whole cue
    sheet ends on it (what follows, the route map, is a drawing that cannot split;
    in large print 75 %, below) or the next page carries only the cue sheet's last
    cue and finish, taken with the cautions.
    Before this, the day ride's four cards took four pages each with page 2 about half
    empty (0.56–0.66) and the cue sheet on page 3. (The A5 day ride now fits its two
    pages; in large print it runs on.)"""
    continued = 0
    for config, out, _ in (demo_site, large_print_demo):
        page = page_geometry(config.card_size, config.large_print)
        top, _, bottom, _ = (float(m) for m in page["margins"].replace("mm", "").split())
        # large print: a page may end before what cannot split, each up to a sixth of a
        # page in 14 pt: the food guide (kept with the table's last row), a cue and its
        # note, the cue sheet's last rows (taken with the cautions: never alone there)
        full = 0.75 if config.large_print else 0.9
        continued += _continued(out, page["budget"], top, bottom, full)
    assert continued >= 1  # the day ride's large-print cards run on to a second sheet


def _continued(out: Path, budget: int, top: float, bottom: float, full: float) -> int:
    """Check the continued cards of a demo build (see above); returns how many."""
    continued = 0
    for folder in sorted(p for p in out.iterdir() if p.is_dir()):
        for card in _cards(folder):
            fill = _fill(card, top, bottom)
            # within budget, or run on and ended on a whole sheet (an even count)
            assert len(fill) <= budget or (len(fill) % 2 == 0 and len(fill) <= 2 * budget), (card, fill)
            if len(fill) > budget:
                continued += 1
                words = [" ".join(w[4] for w in page) for page in _words(card)]
                # the cue sheet's heading over its table, and its last row (not the
                # food table's "Finish (95.0 km)")
                assert re.search(r"Cue sheet At Cue", " ".join(words[:budget])), card.relative_to(out)
                ends = re.search(r"\d (km|mi) Finish\b", words[budget - 1])
                # or the next page carries only the cue sheet's last cue and its finish,
                # which go with the cautions (never alone on their page)
                carried = words[budget].split("Before you ride")[0]
                tail = (
                    len(re.findall(r"\b\d\d:\d\d\b", carried)) <= 2 and "Cue sheet" not in carried
                )  # a time a row
                assert min(fill[: budget - 1]) >= full and (fill[budget - 1] >= full or ends or tail), (
                    card.relative_to(out),
                    fill,
                )
                assert fill[budget] > 0  # the card runs on: the next page is not the blank back
    return continued


# -- a short outing in large print ----------------------------------------------------

OUTING_RIDERS = (("Cargo", "e-assist-cargo"), ("Hand", "handcycle"), ("Road", "road-hoods"))


def _outing(src: Path, out: Path, site: str, theme: str = "") -> Path:
    """An invented 22 km outing with 2 climbs and 13 cues, in large print unless
    ``site`` says otherwise; ``theme``: a template folder to use."""
    src.mkdir(parents=True)
    long_route(src / "outing.gpx", km=22, turns=12, climbs=2)
    riders = "".join(f'[[riders]]\nname = "{n}"\nvehicle = "{v}"\n' for n, v in OUTING_RIDERS)
    (src / "site.toml").write_text(
        f'[site]\ntitle = "Invented short outing"\n{site}\n{theme}'
        '[event]\nstart = "09:00"\ncontact = "Desk 01632 960100"\nemergency = "112"\n'
        f'[[routes]]\ngpx = "outing.gpx"\n{riders}',
        encoding="utf-8",
    )
    build_site(load_config(src / "site.toml"), out, jobs=2)
    return out / "outing"


LARGE = 'card_size = "A5"\nlarge_print = true'


@pytest.fixture(scope="module")
def large_outing(tmp_path_factory):
    root = tmp_path_factory.mktemp("outing")
    return _outing(root / "src", root / "site", LARGE)


def test_large_print_outing_keeps_within_four_pages(large_outing):
    """Large print's budget is four A5 pages (two sheets); before, the e-assist card of
    this outing took five (three sheets) with a thumbnail map."""
    cards = _cards(large_outing)
    assert [c.stem for c in cards] == ["cargo", "hand", "road"]
    for card in cards:
        assert len(PdfReader(card).pages) <= 4, card.name


def _scale_label(page, below: float):
    """The map's scale-bar label ("1 km") on a page: a number and "km" with no words
    after it on its line (a cue row goes on with the cue), below ``below``."""
    for x0, y0, x1, y1, text in page:
        if text in ("km", "mi") and y0 > below:
            line = [w for w in page if abs(w[1] - y0) < 2]
            before = [w for w in line if w[2] <= x0 and x0 - w[2] < 6]
            after = [w for w in line if w[0] >= x1 and w[4].isalpha()]
            if before and re.fullmatch(r"[\d.]+", before[-1][4]) and not after:
                return (x0, y0, x1, y1, text)
    return None


def test_large_print_map_reads_at_the_body_size(large_outing):
    """The map's labels (the north arrow's N, the scale bar's "1 km") are at least as
    tall as the card's 14 pt body text, and the map is drawn at least 28 mm from its
    north arrow to its scale bar. Measured from the PDF's word boxes; the same
    measure on the card before this gave the e-assist card's thumbnail map 18.7 mm
    with labels 9.3 pt tall against the body's 16.3."""
    for card in _cards(large_outing):
        check_map_reads(card)


def check_map_reads(card: Path) -> None:
    """The card's map labels (N, the scale bar's) are as tall as its "Finish" (body
    text), and the map is at least 28 mm from its north arrow to its scale bar."""
    pages = _words(card)
    body = sorted(y1 - y0 for page in pages for _, y0, _, y1, text in page if text == "Finish")
    assert body, card.name
    page = next(p for p in pages if any(text == "N" for *_, text in p))
    north = next(w for w in page if w[4] == "N")
    bar = _scale_label(page, north[3])
    assert bar is not None, card.name
    assert north[3] - north[1] >= body[0] - 0.2, (card.name, north, body[0])
    assert bar[3] - bar[1] >= body[0] - 0.2, (card.name, bar, body[0])
    assert bar[1] - north[1] >= 28 * MM, (card.name, (bar[1] - north[1]) / MM)


#: The demo's short outings: the hill loop (26 km), the accessible path and the
#: riverside loop (the 95 km day ride may run on to a continuation sheet).
SHORT_OUTINGS = ("hill-loop", "accessible-path", "riverside-loop")


def test_the_demos_short_outings_in_large_print_keep_within_four_pages(large_print_demo):
    """Every card of the demo's short outings in large print: at most four A5 pages,
    with a map that reads (:func:`check_map_reads`). Before this the hill loop's three
    cards took six pages each (five and a blank back): the profile, a drawing that
    cannot split, left a third of page 1 empty; the cue sheet's notes ran down a column
    a few words wide; and the map took a page's width above the cautions, which then
    started a page of their own."""
    _, out, _ = large_print_demo
    cards = [card for route in SHORT_OUTINGS for card in _cards(out / route)]
    assert len(cards) == 6
    for card in cards:
        assert len(PdfReader(card).pages) <= 4, card.relative_to(out)
        check_map_reads(card)


def test_large_print_keeps_its_type_size(large_print_demo):
    """Large print promises 14 pt type: on every card of the demo in large print the
    body (the size of most of the characters) is 14 pt, and nothing is smaller than
    12 pt (the running header and footer, the event's name over the title, the
    profile's axis labels). The event's name printed at 11.9 pt before."""
    _, out, _ = large_print_demo
    cards = sorted(p for p in out.glob("*/*.pdf") if p.stem not in ("coach", "all-cards", "all-cards-2up"))
    assert len(cards) == 9
    for card in cards:
        sizes = font_sizes(card)
        assert sizes.most_common(1)[0][0] == pytest.approx(14, abs=0.05), card.name
        assert min(sizes) >= 12 - 0.05, (card.relative_to(out), sorted(sizes.items())[:3])


# -- the assist levels ----------------------------------------------------------------


def _without_levels(theme: Path) -> str:
    """A theme whose cards leave the motor's assist levels out (everything else as
    cardgen's): the card with and without them, for comparing page counts."""
    from cardgen.paths import default_templates

    theme.mkdir()
    text = (default_templates() / "cautions.html").read_text(encoding="utf-8")
    needle = "{{ text }}"
    assert needle in text
    (theme / "cautions.html").write_text(text.replace(needle, '{{ text.split(" Assist level")[0] }}'))
    return f'templates = "{theme}"\n'


@pytest.mark.parametrize("site", [LARGE, 'card_size = "A5"', 'card_size = "pocket"'])
def test_the_assist_levels_never_add_a_page(tmp_path, site, request):
    """The outing's e-assist card prints every assist level with its ratio, and has
    the same pages as the same card without them (a theme that leaves them out); so
    do the riders without a motor (whose cards do not change)."""
    # in large print, the outing the tests above read (the same site, built once)
    if site == LARGE:
        with_levels = request.getfixturevalue("large_outing")
    else:
        with_levels = _outing(tmp_path / "a", tmp_path / "a-site", site)
    without = _outing(tmp_path / "b", tmp_path / "b-site", site, _without_levels(tmp_path / "theme"))
    text = " ".join(
        subprocess.run(
            ["pdftotext", str(with_levels / "cargo.pdf"), "-"], capture_output=True, text=True
        ).stdout.split()
    )
    assert re.search(r"Assist levels 1–\d: \d+(, \d+)* % of the rider's power", text)
    plain = " ".join(
        subprocess.run(
            ["pdftotext", str(without / "cargo.pdf"), "-"], capture_output=True, text=True
        ).stdout.split()
    )
    assert "Assist levels" not in plain
    for card in _cards(with_levels):
        assert len(PdfReader(card).pages) == len(PdfReader(without / card.name).pages), (site, card.name)


def test_every_card_keeps_the_organisers_words_on_its_cues(demo_site):
    """A waypoint's description is the organiser's note to riders ("Two hairpins
    below: brake before them, not in them", sample_routes/hill-loop.gpx): no
    condensing step drops it. The demo's e-assist and city-bike cards once did, with
    their second page 40 % empty."""
    config, out, _ = demo_site
    cards = [
        p for p in (out / "hill-loop").glob("*.pdf") if p.stem not in ("coach", "all-cards", "all-cards-2up")
    ]
    (hill,) = [rc for rc in config.routes if rc.gpx.stem == "hill-loop"]
    assert len(cards) == sum(1 for r in config.riders if r.rides(hill, hill.name or "hill-loop")) >= 3
    for card in cards:
        text = " ".join(
            subprocess.run(
                ["pdftotext", str(card), "-"], capture_output=True, text=True, check=True
            ).stdout.split()
        )
        # the first words of each note (a table cell may wrap the rest out of reading order)
        assert "Two hairpins below" in text, card.name
        assert "Narrow lane" in text, card.name
