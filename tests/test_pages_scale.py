"""Pages for hundreds of riders: 300 riders on one route, read in a real browser at
phone (360 px) and desktop (1,200 px) width."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

from cardgen.build import build_site
from cardgen.config import load_config

pytestmark = pytest.mark.slow
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
VEHICLES = ("road-hoods", "city-upright", "handcycle", "tandem", "e-assist-city", "trike-recumbent")
RIDERS = 300


@pytest.fixture(scope="module")
def big_site(tmp_path_factory):
    src = tmp_path_factory.mktemp("big")
    shutil.copy(SAMPLES / "hill-loop.gpx", src)
    rows = ["name,vehicle,cp_w,flat_w,climb_w,bib"]
    for i in range(RIDERS):
        cp = 120 + (i * 7) % 160
        rows.append(f"Entrant {i:03d},{VEHICLES[i % len(VEHICLES)]},{cp},{int(cp * 0.7)},{cp},{1000 + i}")
    (src / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (src / "site.toml").write_text(
        'riders = "entrants.csv"\n[event]\nstart = "07:00"\nstart_interval_min = 0.5\n'
        '[[routes]]\ngpx = "hill-loop.gpx"\n',
        encoding="utf-8",
    )
    out = src / "site"
    build_site(load_config(src / "site.toml"), out=out, jobs=2, pdf=False)
    return out


def test_route_page_lists_riders_as_rows_and_summarises_the_rest(big_site):
    html = (big_site / "hill-loop" / "index.html").read_text(encoding="utf-8")
    riders = html.split('id="rider-table"')[1].split("</table>")[0]
    assert riders.count("<tr>") == RIDERS + 1  # the header row and one per rider
    # no other table grows with the riders: every header row has a fixed few columns
    for head in html.split("<thead>")[1:]:
        assert head.split("</thead>")[0].count("<th") <= 8
    assert 'id="find"' in html and 'src="../find.js"' in html
    assert (big_site / "find.js").is_file()


def _chromium():
    return shutil.which("chromium") or shutil.which("chromium-browser")


def _in_frame(page: Path, width: int, profile: Path, script: str) -> str:
    """Show ``page`` in a frame ``width`` px wide (a frame, because headless Chromium
    will not make its window narrower than 500 px), run ``script`` once it has loaded
    (``d`` is its document) and return what the script put in ``data-out``."""
    harness = page.parent / ".harness.html"
    harness.write_text(
        f'<!DOCTYPE html><body style="margin:0"><iframe id="f" src="{page.name}" '
        f'style="width:{width}px;height:800px;border:0"></iframe><script>'
        'document.getElementById("f").addEventListener("load",function(){'
        f"var d=this.contentDocument;var out=(function(){{{script}}})();"
        'document.body.setAttribute("data-out",out)});</script>',
        encoding="utf-8",
    )
    try:
        dom = subprocess.run(
            [
                _chromium(),
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--allow-file-access-from-files",
                "--no-first-run",
                "--disable-background-networking",
                f"--user-data-dir={profile}",
                "--window-size=1300,900",
                "--virtual-time-budget=5000",
                "--dump-dom",
                harness.as_uri(),
            ],
            capture_output=True,
            text=True,
            timeout=120,
            check=True,
        ).stdout
    finally:
        harness.unlink()
    return dom.split('data-out="')[1].split('"')[0]


def _widths(page: Path, width: int, profile: Path) -> tuple[int, int]:
    """scrollWidth and clientWidth of ``page`` at ``width`` px."""
    out = _in_frame(page, width, profile, 'var e=d.documentElement;return e.scrollWidth+"/"+e.clientWidth;')
    scroll, client = out.split("/")
    return int(scroll), int(client)


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
@pytest.mark.parametrize("width", [360, 1200])
@pytest.mark.parametrize("page", ["index.html", "hill-loop/index.html"])
def test_no_page_scrolls_sideways(big_site, page, width, tmp_path):
    scroll, client = _widths(big_site / page, width, tmp_path / "profile")
    assert client > 0.8 * width
    assert scroll <= client


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
def test_the_search_box_filters_the_riders(big_site, tmp_path):
    """The page's own script, run in Chromium: typing a bib leaves that rider's row;
    typing a vehicle leaves that vehicle's riders; clearing the box shows all."""
    page = big_site / "hill-loop" / "index.html"
    script = (
        'var box=d.getElementById("find");var rows=d.querySelectorAll("#rider-table tbody tr");'
        "function shown(){var n=0;rows.forEach(function(r){if(!r.hidden)n++;});return n;}"
        "function type(t){box.value=t;box.dispatchEvent(new Event('input'));return shown();}"
        'return [box.parentNode.hidden, type("1007"), type("handcycle"), type("")].join("/");'
    )
    hidden, one, vehicle, everyone = _in_frame(page, 1200, tmp_path / "profile", script).split("/")
    assert hidden == "false"  # the script shows the box
    assert int(one) == 1 and int(everyone) == RIDERS
    assert int(vehicle) == RIDERS // len(VEHICLES)  # every sixth entrant rides a handcycle


def test_the_power_chart_draws_one_curve_per_vehicle_kind(big_site):
    """300 riders: one legend line per vehicle kind with its riders counted (six
    kinds, 50 riders each), not one per rider; the alt text gives each kind's range."""
    svg = (big_site / "hill-loop" / "power.svg").read_text(encoding="utf-8")
    html = (big_site / "hill-loop" / "index.html").read_text(encoding="utf-8")
    assert "Entrant" not in svg
    assert svg.count("(50 riders)") == len(VEHICLES)
    alt = html.split('src="power.svg" alt="')[1].split('"')[0]
    assert "each vehicle kind" in alt and alt.count("(50 riders) ride it at") == len(VEHICLES)


#: What a page shows that may be wider than the window: each element's right edge,
#: and any element that scrolls sideways in its own box (``overflow-x``), by tag and
#: class; hidden elements (a table's header row kept for screen readers, clipped to a
#: pixel) take no room and are left out.
OVERFLOW_SCRIPT = (
    "var w=d.documentElement.clientWidth,bad=[];"
    'd.querySelectorAll("body *").forEach(function(e){'
    "var r=e.getBoundingClientRect(),s=getComputedStyle(e);"
    'if(e.closest("thead"))return;'
    'var name=e.tagName+"."+e.className;'
    'if(r.width>0&&(r.right>w+1||r.left<-1))bad.push(name+" at "+Math.round(r.left)+"-"+Math.round(r.right));'
    'if(/auto|scroll/.test(s.overflowX)&&e.scrollWidth>e.clientWidth+1)bad.push(name+" scrolls "+e.scrollWidth+" in "+e.clientWidth);'
    '});return bad.length+" "+bad.slice(0,4).join(" ; ");'
)


def _overflow(page: Path, width: int, profile: Path) -> str:
    return _in_frame(page, width, profile, OVERFLOW_SCRIPT)


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
@pytest.mark.parametrize("width", [360, 1200])
@pytest.mark.parametrize("page", ["index.html", "hill-loop/index.html"])
def test_no_table_or_chart_scrolls_sideways(big_site, page, width, tmp_path):
    """At 360 px every table stacks its rows (each cell labelled by its column) and
    each chart shows its narrow drawing: nothing reaches past the window and nothing
    scrolls sideways in a box of its own, captions included."""
    assert _overflow(big_site / page, width, tmp_path / "p") == "0 "


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
@pytest.mark.parametrize("width", [360, 1200])
def test_the_demo_pages_do_not_scroll_sideways(demo_site, width, tmp_path):
    _, out, _ = demo_site
    pages = [out / "index.html", *sorted(out.glob("*/index.html"))]
    assert len(pages) == 5
    for page in pages:
        assert _overflow(page, width, tmp_path / "p") == "0 ", page
        scroll, client = _widths(page, width, tmp_path / "p")
        assert scroll <= client, page


def _chart_sizes(page: Path, width: int, profile: Path) -> list[tuple[int, ...]]:
    """(shown width, drawn width, width of its box) of each chart, in CSS px."""
    script = (
        'var out=[];d.querySelectorAll("img.plot").forEach(function(i){'
        "out.push([Math.round(i.getBoundingClientRect().width),i.naturalWidth,"
        'i.parentNode.clientWidth].join(":"));});return out.join(",");'
    )
    return [
        tuple(int(x) for x in item.split(":")) for item in _in_frame(page, width, profile, script).split(",")
    ]


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (Debian package 'chromium')")
@pytest.mark.parametrize("width", [360, 1200])
def test_charts_keep_their_text_at_least_10_px(big_site, width, tmp_path):
    """Each chart is shown at no less than its drawn size, so its smallest text
    (7.5 pt = 10 CSS px at that size) stays readable; at 360 px that is the chart's
    narrow drawing, which fits the screen whole (nothing to scroll)."""
    page = big_site / "hill-loop" / "index.html"
    sizes = _chart_sizes(page, width, tmp_path / "p")
    assert len(sizes) == 3  # profile, map, power chart
    for shown, natural, box in sizes:
        assert natural > 0 and shown >= natural - 1, (shown, natural)
        assert shown <= box, (shown, box)
    if width == 360:  # the narrow drawings are the ones shown
        assert all(natural <= 328 for _, natural, _ in sizes), sizes
    scroll, client = _widths(page, width, tmp_path / "profile")
    assert scroll <= client
