"""Every rider's start (bib, wave and time, to the second when starts are half a
minute apart) on their card, the print pack's cover, the coach sheet, the route page,
the index and plan.json, all equal to what plan/starts computed."""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest
from buildkit import font_sizes

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.plan.starts import event_starts

pytestmark = pytest.mark.slow
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
SITE = """
[event]
date = "2027-04-18"
start = "09:00"
start_interval_min = 1
[[waves]]
name = "Early"
start = "09:30"
interval_min = 0.5
riders = ["Ada", "Bea", "Cy"]
[[routes]]
gpx = "riverside-loop.gpx"
[[riders]]
name = "Ada"
vehicle = "road-hoods"
bib = 11
[[riders]]
name = "Bea"
vehicle = "city-upright"
bib = 12
[[riders]]
name = "Cy"
vehicle = "handcycle"
bib = 13
[[riders]]
name = "Dee"
vehicle = "road-hoods"
bib = 14
"""


def _text(pdf: Path) -> str:
    return subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True).stdout


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("starts")
    shutil.copy(SAMPLES / "riverside-loop.gpx", folder)
    (folder / "site.toml").write_text(SITE, encoding="utf-8")
    config = load_config(folder / "site.toml")
    build_site(config, folder / "site", jobs=1)
    return config, folder / "site"


def test_the_start_is_on_the_card_cover_coach_sheet_pages_and_plan_json(built):
    config, site = built
    starts = event_starts(config)
    want = {
        "Ada": ("11", "Early", "09:30:00"),
        "Bea": ("12", "Early", "09:30:30"),
        "Cy": ("13", "Early", "09:31:00"),
        "Dee": ("14", None, "09:03:00"),  # the open start: the fourth entrant, 1 min apart
    }
    assert {
        config.riders[i].rider.name: (str(config.riders[i].bib), s.wave, s.at.strftime("%H:%M:%S"))
        for (i, _), s in starts.by_entry.items()
    } == want
    route = site / "riverside-loop"
    plans = json.loads((route / "plan.json").read_text())["plans"]
    for p in plans:
        bib, wave, at = want[p["rider"]["name"]]
        assert (str(p["rider"]["bib"]), p["rider"]["wave"], p["rider"]["start"]) == (
            bib,
            wave,
            f"2027-04-18T{at}",
        )
    coach, cover, page = (
        _text(route / "coach.pdf"),
        _text(route / "all-cards.pdf"),
        (route / "index.html").read_text(),
    )
    for name, (bib, wave, at) in want.items():
        card = " ".join(_text(route / f"{name.lower()}.pdf").split())
        assert f"{name} · bib {bib}" in card and f"start {at}" in card
        assert (f"wave {wave}" in card) == (wave is not None)
        line = next(x for x in coach.splitlines() if x.strip().startswith(name + " "))
        assert bib in line.split() and at in line and (wave or "–") in line
        assert any(name in x and at in x and bib in x.split() for x in cover.splitlines())
        assert f'<td class="num" data-label="Start (wave)">{at}{f" ({wave})" if wave else ""}</td>' in page
    index = (site / "index.html").read_text()
    assert (
        "wave Early 09:30:00–09:31:00 (3 riders, 30 s apart)" in index
        and "other riders from 09:00:00" in index
    )


def test_the_coach_sheet_and_cover_print_nothing_below_7_5_pt(built):
    """Read back from the PDFs (pypdf's text visitor: font size × text matrix)."""
    _, site = built
    for pdf in (site / "riverside-loop" / "coach.pdf", site / "riverside-loop" / "all-cards.pdf"):
        sizes = font_sizes(pdf)
        assert sizes and min(sizes) >= 7.5 - 0.05, (pdf.name, sorted(sizes.items())[:4])
