"""Cards and pages of the demo event: numbers, HTML5, a real browser, PDF pages,
escaping, contrast."""

import re
import shutil
import subprocess
from datetime import timedelta
from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import html5lib
import numpy as np
import pytest

from cardgen.config import rider_start
from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.render.html import slugify
from cardgen.route.checkpoints import resolve_checkpoints
from cardgen.route.terrain import build_terrain

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check


def _half_up(x, step):
    """Round half up to a multiple of step (spelled out here, not taken from cardgen)."""
    q = (Decimal(repr(float(x))) / Decimal(str(step))).quantize(Decimal(1), rounding=ROUND_HALF_UP)
    return q * Decimal(str(step))


def _pdftotext(path: Path) -> str:
    return subprocess.run(
        ["pdftotext", "-layout", str(path), "-"], capture_output=True, text=True, check=True
    ).stdout


needs_poppler = pytest.mark.skipif(
    shutil.which("pdftotext") is None, reason="poppler-utils (pdftotext, pdftoppm) is not installed"
)


@needs_poppler
def test_every_number_on_the_cards_is_the_plans(demo_site):
    config, out, _ = demo_site
    checked = 0
    for route in config.routes:
        track = read_gpx(route.gpx)
        analysis = analyse(track, build_terrain(track))
        checkpoints = resolve_checkpoints(
            route.checkpoints, track, analysis.terrain, str(route.gpx), stops=route.stops, stop=route.stop
        )
        stops = tuple((c.distance, c.stop) for c in checkpoints)
        slug = slugify(route.gpx.stem)
        for index, rc in enumerate(config.riders):
            if not rc.rides(route, route.gpx.stem):
                continue
            plan = make_plan(analysis, rider=rc.rider, conditions=config.conditions, stops=stops)
            start, _ = rider_start(config, index, route)
            text = _pdftotext(out / slug / f"{slugify(rc.rider.name)}.pdf")
            lines = text.splitlines()
            for c in plan.climbs:
                row = next(line for line in lines if re.match(rf"\s*{c.number}\s+\d+\.\d (km|mi)", line))
                minutes = int(_half_up(c.time / 60, 1))
                expected = [
                    f"{_half_up(c.climb.start_distance / 1000, 0.1):.1f} km",
                    f"{_half_up(c.power_for_target, 5):.0f} W",
                    f"{_half_up(c.speed_at_effort * 3.6, 0.5):.1f} km/h",
                    f"{minutes // 60}:{minutes % 60:02d}",
                    f"{_half_up(c.climb.avg_grade * 100, 0.5):.1f} %",
                ]
                for item in expected:
                    assert item in row, (route.gpx.name, rc.rider.name, item, row)
                # the plan's own power and time on the climb, in the advice under it
                # (where it may need walking: "hold 150 W while riding, 20 min if all ridden")
                power, minutes = f"{_half_up(c.rider_power, 5):.0f} W", int(_half_up(c.time / 60, 1))
                holds = (
                    f"hold {power} for {minutes} min",
                    f"hold {power} while riding, {minutes} min if all ridden",
                )
                said = " ".join(text.split())
                assert any(hold in said for hold in holds), (route.gpx.name, rc.rider.name, holds)
                checked += 1
            for timed in plan.cues:
                when = start + timedelta(minutes=int(_half_up(timed.elapsed / 60, 1)))
                assert when.strftime("%H:%M") in text
            total = int(_half_up(plan.totals.time / 60, 1))
            assert f"moving time {total // 60}:{total % 60:02d}" in text
    assert checked >= 10


def _pages(out: Path):
    return sorted(out.rglob("*.html"))


def test_pages_are_valid_html5_and_images_have_alt_text(demo_site):
    _, out, _ = demo_site
    pages = _pages(out)
    assert len(pages) == 5  # the index and four routes
    for page in pages:
        text = page.read_text(encoding="utf-8")
        parser = html5lib.HTMLParser(strict=True)
        parser.parse(text)  # raises on any parse error
        for img in re.findall(r"<img\b[^>]*>", text):
            alt = re.search(r'alt="([^"]*)"', img)
            assert alt and len(alt.group(1)) > 20, img


def test_cautions_on_every_page(demo_site):
    from cardgen.render.html import CAUTIONS

    _, out, _ = demo_site
    for page in _pages(out):
        text = page.read_text(encoding="utf-8")
        assert "legal limits" in text and "medical condition" in text and len(CAUTIONS) == 5


@needs_poppler
def test_cautions_on_every_card_page(demo_site):
    _, out, _ = demo_site
    for pdf in sorted(p for p in out.rglob("*.pdf") if not p.name.startswith("all-cards")):  # not the packs
        for page in _pdftotext(pdf).split("\f"):
            if page.strip():  # the short form at the foot of every page
                assert "model estimate" in page.lower() and "road rules apply" in page, pdf
        if pdf.name not in ("coach.pdf", "day-sheet.pdf"):  # and every caution in full at a card's end
            # in reading order (not -layout, which interleaves the map's labels beside them)
            reading = subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True)
            pages = [" ".join(p.split()) for p in reading.stdout.strip("\f").split("\f")]
            ends = " ".join(pages[-2:])  # they may start on the page before the last
            tail = ends[ends.rfind("Before you ride") :]
            assert "Before you ride" in ends and "qualified professional" in tail, pdf
            assert "Cue sheet" not in tail, pdf


@needs_poppler
def test_card_rasterises_non_blank_on_its_page_size(demo_site, tmp_path):
    from matplotlib.image import imread

    _, out, _ = demo_site
    card = out / "accessible-path" / "maren-handcycle.pdf"
    info = subprocess.run(["pdfinfo", str(card)], capture_output=True, text=True, check=True).stdout
    width, height = map(float, re.search(r"Page size:\s+([\d.]+) x ([\d.]+) pts", info).groups())
    assert (width, height) == pytest.approx((419.53, 595.28), abs=0.5)  # ISO 216 A5: 148 × 210 mm
    subprocess.run(
        ["pdftoppm", "-png", "-r", "40", "-f", "1", "-l", "1", str(card), str(tmp_path / "p")], check=True
    )
    image = imread(next(tmp_path.glob("p*.png")))
    assert image.shape[1] == pytest.approx(148 / 25.4 * 40, abs=2)
    ink = (image[..., :3].mean(axis=2) < 0.5).mean()
    assert 0.01 < ink < 0.5


def _chromium():
    return shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
def test_route_page_in_a_real_browser(demo_site, tmp_path):
    from matplotlib.image import imread

    _, out, _ = demo_site
    page = (out / "hill-loop" / "index.html").as_uri()
    flags = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        f"--user-data-dir={tmp_path / 'profile'}",
    ]
    shot = tmp_path / "page.png"
    subprocess.run(
        [_chromium(), *flags, "--window-size=1200,1600", f"--screenshot={shot}", page],
        capture_output=True,
        timeout=120,
        check=True,
    )
    image = imread(shot)
    assert image.shape[0] >= 1000
    grey = image[..., :3].mean(axis=2)
    assert grey.std() > 0.05  # not a blank page
    assert (grey < 0.5).mean() > 0.01
    dom = subprocess.run(
        [_chromium(), *flags, "--dump-dom", page], capture_output=True, text=True, timeout=120, check=True
    ).stdout
    assert "<title>Pellowind Bank Hill Loop" in dom


def _contrast(a: str, b: str) -> float:
    """WCAG 2.2 contrast ratio of two #rrggbb colours (relative luminance, sRGB)."""

    def luminance(hex_colour):
        rgb = np.array([int(hex_colour[i : i + 2], 16) for i in (1, 3, 5)]) / 255
        lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
        return float(lin @ [0.2126, 0.7152, 0.0722])

    hi, lo = sorted((luminance(a), luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def test_contrast_of_the_theme_colours_wcag_aa():
    from cardgen.paths import default_templates

    css = (default_templates() / "style.css").read_text()
    colours = dict(re.findall(r"--([a-z-]+):\s*(#[0-9a-f]{6})", css))
    pairs = [
        ("ink", "paper"),
        ("muted", "paper"),
        ("accent", "paper"),
        ("warn-ink", "paper"),
        ("paper", "accent"),
        ("ink", "stripe"),
        ("muted", "stripe"),
        ("warn-ink", "stripe"),
        ("accent", "stripe"),
    ]
    for fg, bg in pairs:
        assert _contrast(colours[fg], colours[bg]) >= 4.5, (fg, bg)
    # the cards' own colours
    card = (default_templates() / "card.html").read_text()
    for fg in set(re.findall(r"color: (#[0-9a-f]{6})", card)):
        assert _contrast(fg, "#ffffff") >= 4.5 and _contrast(fg, "#f2f2f2") >= 4.5


def test_contrast_formula_reference_values():
    # WCAG 2.2 definition: black on white is 21:1; #767676 on white is the familiar 4.54:1
    assert _contrast("#000000", "#ffffff") == pytest.approx(21.0)
    assert _contrast("#767676", "#ffffff") == pytest.approx(4.54, abs=0.01)


@needs_poppler
def test_legend_and_cautions_fit_the_card(demo_site):
    """The legend explains exactly the symbols on the card; the e-assist caution is on
    e-assist cards only (issue: cards fit to hand out)."""
    from cardgen.render.html import CARD_ASSIST_CAUTION, SYMBOLS

    _, out, _ = demo_site
    for pdf in sorted((out / "hill-loop").glob("*.pdf")):
        if pdf.name == "coach.pdf" or pdf.name.startswith("all-cards"):
            continue
        text = _pdftotext(pdf)
        shown = {letter for letter, meaning in SYMBOLS.values() if meaning in " ".join(text.split())}
        explained_w = "below balance speed" in text
        assert ("e-assist" in pdf.name) == (CARD_ASSIST_CAUTION in " ".join(text.split())), pdf
        assert shown, pdf  # the hill loop gives every card some symbol
        if "handcycle" in pdf.name:
            assert not explained_w  # three wheels: never the walking symbol


def test_profile_shading_orders_by_lightness_so_it_reads_in_greyscale():
    """Steeper is darker, up or down: on a profile of 0, 3, 7 and 11 % stretches (and
    an 11 % descent) the fills' luminance (ITU-R BT.709 weights) falls as the
    steepness rises, and the 11 % climb and the 11 % descent get the same shade."""
    from types import SimpleNamespace

    from cardgen.render import plots

    d = np.arange(0.0, 6001.0, 10.0)
    grade = np.select([d < 1000, d < 2000, d < 3000, d < 4000, d < 5000], [0.0, 0.03, 0.07, 0.11, -0.11], 0.0)
    e = 100 + np.concatenate(([0.0], np.cumsum(grade[:-1] * 10.0)))
    terrain = SimpleNamespace(
        distance=d, elevation=e, grade=grade[:-1], length=float(d[-1]), gain=0.0, loss=0.0
    )
    svg, _ = plots.elevation_profile(terrain, [])

    def luminance(hex_colour):
        r, g, b = (int(hex_colour[i : i + 2], 16) / 255 for i in (0, 2, 4))
        return 0.2126 * r + 0.7152 * g + 0.0722 * b

    # the filled stretches, left to right: one polygon per run of a band
    fills = [f for f in re.findall(r"<path d=\"M [^\"]*\"[^>]*?fill: ?#([0-9a-f]{6})", svg)]
    shades = []
    for f in fills:
        if not shades or shades[-1] != f:
            shades.append(f)
    flat, three, seven, eleven = shades[:4]
    assert luminance(flat) > luminance(three) > luminance(seven) > luminance(eleven)
    # the descent, after the summit's short mixed stretch, takes the climb's shade again
    assert eleven in shades[5:]


def test_profile_shading_reads_the_terrains_own_grade():
    """The shading is the terrain's grade (the climb table's), averaged over each drawn
    stretch, not a grade made again from the thinned points: a terrain whose grade
    says 11 % over a stretch is shaded as 11 % there even where its elevation (here
    deliberately inconsistent) is flat, and the 0 % stretch stays the lightest."""
    from types import SimpleNamespace

    from matplotlib import colormaps
    from matplotlib.colors import BoundaryNorm, to_hex

    from cardgen.render import plots

    d = np.arange(0.0, 20001.0, 10.0)  # 2001 nodes: thinned to every 3rd
    grade = np.where(d[:-1] < 10000, 0.0, 0.11)
    e = np.full(d.size, 100.0)
    terrain = SimpleNamespace(distance=d, elevation=e, grade=grade, length=float(d[-1]), gain=0.0, loss=0.0)
    svg, _ = plots.elevation_profile(terrain, [])
    bounds = np.arange(0.0, plots.GRADE_RANGE + 0.1, 2.0)
    cmap, norm = colormaps["cividis_r"], BoundaryNorm(bounds, 256, extend="max")
    profile = svg[svg.index('<g id="axes_1">') : svg.index('<g id="axes_2">')]  # not the colour bar
    fills = re.findall(r"<path d=\"M [^\"]*\"[^>]*?fill: ?(#[0-9a-f]{6})", profile)
    assert to_hex(cmap(norm(0.0))) in fills and to_hex(cmap(norm(11.0))) in fills
    # the same thinned stretches, averaged: exactly the mean of the segment grades
    idx = plots.thin_index(d.size)
    assert np.allclose(
        plots.thinned_grade(grade, idx), [grade[a:b].mean() for a, b in zip(idx[:-1], idx[1:], strict=True)]
    )


@needs_poppler
def test_every_card_carries_the_event_the_route_notes_and_the_numbers_to_call(demo_site):
    config, out, _ = demo_site
    for route in config.routes:
        for pdf in sorted((out / slugify(route.gpx.stem)).glob("*.pdf")):
            if pdf.name == "coach.pdf" or pdf.name.startswith("all-cards"):
                continue
            first = " ".join(_pdftotext(pdf).split("\f")[0].split())
            for text in (config.title, "Sunday 18 April 2027", route.notes, config.emergency, config.contact):
                assert " ".join(text.split()) in first, (pdf.name, text)


@needs_poppler
def test_cards_and_coach_sheets_are_tagged_pdfs_with_language_and_title(demo_site):
    """Tagged (PDF/UA-style structure, WeasyPrint's pdf_tags) so screen readers can
    read them; the language and title come from the HTML."""
    from pypdf import PdfReader

    _, out, _ = demo_site
    pdfs = [p for p in sorted(out.rglob("*.pdf")) if not p.name.startswith("all-cards")]
    assert pdfs
    for pdf in pdfs:
        info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True).stdout
        assert re.search(r"^Tagged:\s+yes$", info, re.M), pdf
        assert re.search(r"^Title:\s+\S", info, re.M), pdf
        assert PdfReader(pdf).trailer["/Root"]["/Lang"] == "en", pdf


@needs_poppler
def test_profile_bands_read_in_greyscale_print(tmp_path):
    """The profile printed in greyscale (WeasyPrint to PDF, poppler's pdftoppm -gray):
    along a row just above the base of the fill, the grey of the 0, 3, 7 and 11 %
    stretches darkens in that order."""
    from types import SimpleNamespace

    from matplotlib.image import imread

    from cardgen.render import plots
    from cardgen.render.pdf import pdf_bytes

    d = np.arange(0.0, 6001.0, 10.0)
    grade = np.select([d < 1500, d < 3000, d < 4500], [0.0, 0.03, 0.07], 0.11)
    e = 100 + np.concatenate(([0.0], np.cumsum(grade[:-1] * 10.0)))
    terrain = SimpleNamespace(
        distance=d, elevation=e, grade=grade[:-1], length=float(d[-1]), gain=0.0, loss=0.0
    )
    svg, _ = plots.elevation_profile(terrain, [], width_in=5.0, height_in=2.0)
    (tmp_path / "p.svg").write_text(svg, encoding="utf-8")
    (tmp_path / "p.pdf").write_bytes(pdf_bytes('<img src="p.svg" style="width: 120mm">', tmp_path)[0])
    subprocess.run(
        ["pdftoppm", "-gray", "-png", "-r", "100", str(tmp_path / "p.pdf"), str(tmp_path / "g")], check=True
    )
    image = imread(next(tmp_path.glob("g*.png")))
    grey = image if image.ndim == 2 else image[..., 0]
    # the fill's lowest rows: the last rows (from the top) where most of a long run is
    # neither white nor the black axis
    filled = (grey < 0.97) & (grey > 0.15)
    rows = [r for r in range(grey.shape[0]) if filled[r].sum() > 0.5 * filled.sum(axis=1).max()]
    row = grey[rows[-3]]
    cols = np.flatnonzero(filled[rows[-3]])
    values = row[cols[0] : cols[-1] + 1]
    # the four stretches are equal in length: sample the middle of each quarter
    quarters = [
        float(np.median(values[int(len(values) * (q + 0.35) / 4) : int(len(values) * (q + 0.65) / 4)]))
        for q in range(4)
    ]
    assert quarters == sorted(quarters, reverse=True) and quarters[0] - quarters[3] > 0.3, quarters


def test_condensed_descent_notes_are_words_not_codes():
    """The one-line form of a descent's notes says each notice in words (a notice
    without a short form is said in full, never as its internal code)."""
    from types import SimpleNamespace

    from cardgen.plan.model import Notice
    from cardgen.render.pages import descent_brief

    row = SimpleNamespace(
        warnings=(
            Notice("curve", "warning", (("radius", 12.0), ("where", 1500.0), ("speed", 5.0))),
            Notice("fast", "warning", (("coast", 16.0), ("cap", 13.9))),
            Notice("steep", "info", (("grade", -0.12), ("length", 100.0))),
        )
    )
    line = descent_brief(row, "metric")
    assert "curve: slow to 18.0 km/h at 1.5 km" in line and "hold under 50.0 km/h" in line
    assert "steepest 100 m at" in line and "steep;" not in line and not line.endswith("steep")
