"""Print packs: every card in one file, in start order, duplex-safe, and two-up."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from pypdf import PdfReader

from cardgen.build import build_site
from cardgen.config import load_config

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
SITE = """
[event]
start = "09:00"
start_interval_min = 2

[[routes]]
gpx = "riverside-loop.gpx"
[[routes]]
gpx = "hill-loop.gpx"

[[riders]]
name = "Late Rider"
vehicle = "road-hoods"
start = "09:30"
bib = 7
[[riders]]
name = "Early Rider"
vehicle = "handcycle"
start = "08:10"
bib = 9
[[riders]]
name = "Middle Rider"
vehicle = "e-assist-city"
bib = 3
routes = ["riverside-loop"]
"""


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    src = tmp_path_factory.mktemp("packs")
    for name in ("riverside-loop.gpx", "hill-loop.gpx"):
        shutil.copy(SAMPLES / name, src)
    (src / "site.toml").write_text(SITE, encoding="utf-8")
    out = src / "site"
    build_site(load_config(src / "site.toml"), out=out, jobs=1)
    return out


def _pages(path: Path) -> int:
    return len(PdfReader(path).pages)


def _first_line(page) -> str:
    return page.extract_text().strip()


@pytest.mark.parametrize("folder", ["riverside-loop", "."])
def test_pack_is_cover_plus_every_card_padded_to_even_pages(site, folder):
    where = site / folder
    routes = ["riverside-loop", "hill-loop"] if folder == "." else [folder]
    cards = [
        p
        for r in routes
        for p in sorted((site / r).glob("*.pdf"))
        if p.stem not in ("coach", "all-cards", "all-cards-2up")
    ]
    pack = PdfReader(where / "all-cards.pdf")
    cover = len(pack.pages) - sum(_pages(c) + _pages(c) % 2 for c in cards)
    assert cover >= 2 and cover % 2 == 0  # the cover too is a whole sheet
    # every card begins on an odd (front) page: its first page carries its rider's name
    text = [p.extract_text() for p in pack.pages]
    firsts = [i + 1 for i, t in enumerate(text) if "page 1 of" in t]
    assert len(firsts) == len(cards) and all(f % 2 == 1 for f in firsts)


def test_cards_come_in_start_order_and_the_cover_gives_their_pages(site):
    pack = PdfReader(site / "riverside-loop" / "all-cards.pdf")
    text = [p.extract_text() for p in pack.pages]
    order = [
        next(n for n in ("Early Rider", "Middle Rider", "Late Rider") if n in t)
        for t in text
        if "page 1 of" in t
    ]
    # Early 08:10 (own start), Middle 09:04 (third in the config, 2 min apart), Late 09:30
    assert order == ["Early Rider", "Middle Rider", "Late Rider"]
    cover = text[0]
    for name in order:
        first = next(i + 1 for i, t in enumerate(text) if "page 1 of" in t and name in t)
        line = next(x for x in cover.splitlines() if name in x)
        assert line.rstrip().endswith(str(first))


def test_two_up_has_half_the_sheets_on_a4_landscape(site):
    pack = _pages(site / "riverside-loop" / "all-cards.pdf")
    two_up = PdfReader(site / "riverside-loop" / "all-cards-2up.pdf")
    box = two_up.pages[0].mediabox
    assert (round(float(box.width)), round(float(box.height))) == (842, 595)  # A4 landscape
    # cards (and the cover) pair up: an odd number of them leaves one half-empty sheet set
    assert pack / 2 <= len(two_up.pages) <= pack / 2 + 2
    assert _pages(site / "all-cards-2up.pdf") * 2 >= _pages(site / "all-cards.pdf")


def test_index_has_one_row_per_route_and_no_column_per_rider(site):
    """The index summarises each route (riders, fastest / median / slowest planned
    moving time) and links the event's pack; it has no column per rider."""
    html = (site / "index.html").read_text(encoding="utf-8")
    header = html.split("<thead>")[1].split("</thead>")[0]
    assert "Early Rider" not in header and header.count("<th") == 8
    assert "Fastest" in header and "Median" in header and "Slowest" in header
    assert 'href="all-cards.pdf"' in html and 'href="all-cards-2up.pdf"' in html
    body = html.split("<tbody>")[1].split("</tbody>")[0]
    assert body.count("<tr>") == 2


def test_coach_sheet_groups_riders_a_group_to_a_page_in_start_order(tmp_path, monkeypatch):
    """Riders on a route without climbs, in groups of COACH_GROUP (8; 2 here, so that
    the build renders 5 cards, not 20): three groups (2, 2, 1), each on a page of its
    own, the riders in start order."""
    from cardgen.render import pages

    monkeypatch.setattr(pages, "COACH_GROUP", 2)  # in this process: jobs=1 below
    shutil.copy(SAMPLES / "riverside-loop.gpx", tmp_path)
    riders = "".join(
        f'[[riders]]\nname = "Rider {i:02d}"\nvehicle = "road-hoods"\nstart = "08:{(4 - i) * 10:02d}"\n'
        for i in range(5)
    )
    (tmp_path / "site.toml").write_text(
        '[event]\nstart = "08:00"\n[[routes]]\ngpx = "riverside-loop.gpx"\n' + riders, encoding="utf-8"
    )
    out = tmp_path / "site"
    build_site(load_config(tmp_path / "site.toml"), out=out, jobs=1)
    pages_text = [p.extract_text() for p in PdfReader(out / "riverside-loop" / "coach.pdf").pages]
    heads = [next((x for x in t.splitlines() if ": riders " in x), "") for t in pages_text]
    assert [h.split(": riders ")[1] for h in heads] == ["1–2 of 5", "3–4 of 5", "5–5 of 5"]
    # Rider 04 starts first (08:00), Rider 00 last
    assert pages_text[0].index("Rider 04") < pages_text[0].index("Rider 03") and "Rider 00" in pages_text[2]


@pytest.mark.slow
def test_many_cards_render_in_fresh_batches_and_all_arrive(tmp_path, monkeypatch):
    """More cards than one worker makes (CARDS_PER_WORKER, here 4 instead of 40: the
    same batches, three of them, for 9 cards instead of 45): every card is rendered,
    once, and the pack holds them all."""
    from cardgen.build import pipeline

    monkeypatch.setattr(pipeline, "CARDS_PER_WORKER", 4)
    shutil.copy(SAMPLES / "riverside-loop.gpx", tmp_path)
    count = pipeline.CARDS_PER_WORKER + 5
    riders = "".join(f'[[riders]]\nname = "R{i:02d}"\nvehicle = "city-upright"\n' for i in range(count))
    (tmp_path / "site.toml").write_text('[[routes]]\ngpx = "riverside-loop.gpx"\n' + riders, encoding="utf-8")
    report = build_site(load_config(tmp_path / "site.toml"), out=tmp_path / "site", jobs=1)
    assert report.cards_rendered == count + 1  # and the coach sheet
    cards = [p for p in (tmp_path / "site" / "riverside-loop").glob("r*.pdf")]
    assert len(cards) == count and all(_pages(p) >= 2 for p in cards)
    pack = PdfReader(tmp_path / "site" / "riverside-loop" / "all-cards.pdf")
    assert sum("page 1 of" in p.extract_text() for p in pack.pages) == count


@pytest.mark.slow
def test_a_rebuild_numbers_the_cover_from_the_cards_it_kept_and_made(tmp_path):
    """A one-rider rebuild counts the pages of the cards it keeps from the last build's
    manifest and of the cards it makes from their layout, and guesses the cover's
    length from the last build: the event's cover still gives each card's first page,
    and the manifest's counts are the files'."""
    import json

    src = tmp_path / "src"
    src.mkdir()
    for name in ("riverside-loop.gpx", "hill-loop.gpx"):
        shutil.copy(SAMPLES / name, src)
    (src / "site.toml").write_text(SITE, encoding="utf-8")
    out = tmp_path / "site"
    build_site(load_config(src / "site.toml"), out=out, jobs=1)
    (src / "site.toml").write_text(SITE.replace('"handcycle"', '"tandem"'), encoding="utf-8")
    report = build_site(load_config(src / "site.toml"), out=out, jobs=2)
    assert report.cards_reused >= 1  # a card whose rider did not change is kept
    manifest = json.loads((out / "manifest.json").read_text())
    for slug, route in manifest["routes"].items():
        for row in route["summary"]["pack"]:
            assert row["pages"] == _pages(out / slug / row["card"])
    assert manifest["covers"]["."] == 2
    text = [p.extract_text() for p in PdfReader(out / "all-cards.pdf").pages]
    cover = text[0]
    rows = [x for x in cover.splitlines() if x[:1].isdigit() and " Rider" in x]
    assert len(rows) == 5  # three riders on the riverside loop, two on the hill loop
    for line in rows:
        name = next(n for n in ("Early Rider", "Middle Rider", "Late Rider") if n in line)
        route = next(r for r in ("Riverside", "Pellowind") if r in line)
        first = int(line.split()[-1])
        assert "page 1 of" in text[first - 1] and name in text[first - 1] and route in text[first - 1], line
