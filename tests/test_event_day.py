"""The organiser's checks on a 120-rider, four-wave event with stops: every planned
arrival, and every planned stop to its end, inside its checkpoint's window; every rider
with bib, wave and start in plan.json and on the route page; the index's starts are
the waves' own."""

from __future__ import annotations

import json
import shutil
from datetime import datetime, timedelta
from pathlib import Path

import pytest

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.plan.starts import event_starts

pytestmark = pytest.mark.slow
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
# 30 riders to a wave: each wave's starts spread over 15 to 30 minutes, more than the
# 10-minute margin; a 300-rider event's build is bench/bench_event.py's to time
RIDERS = 120
VEHICLES = ("road-hoods", "city-upright", "handcycle", "tandem", "e-assist-city", "trike-recumbent")
WAVES = (("A", "06:45", 0.5), ("B", "07:00", 0.5), ("C", "08:00", 1), ("D", "09:30", 0.5))


@pytest.fixture(scope="module")
def event(tmp_path_factory):
    folder = tmp_path_factory.mktemp("event-day")
    shutil.copy(SAMPLES / "day-ride.gpx", folder)
    rows = ["name,vehicle,cp_w,bib"]
    rows += [
        f"Rider {i:03d},{VEHICLES[i % len(VEHICLES)]},{110 + (i * 7) % 170},{500 + i}" for i in range(RIDERS)
    ]
    (folder / "entrants.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    waves = ""
    for w, (name, start, interval) in enumerate(WAVES):
        members = ", ".join(f'"Rider {i:03d}"' for i in range(w, RIDERS, len(WAVES)))
        waves += f'[[waves]]\nname = "{name}"\nstart = "{start}"\ninterval_min = {interval}\nriders = [{members}]\n'
    (folder / "site.toml").write_text(
        'riders = "entrants.csv"\n[event]\ndate = "2027-04-18"\nstart = "06:30"\ncheckpoint_margin_min = 10\n'
        + waves
        + '[[routes]]\ngpx = "day-ride.gpx"\nstops_min = [10, 30, 10, 10]\n',
        encoding="utf-8",
    )
    config = load_config(folder / "site.toml")
    build_site(config, folder / "site", jobs=2, pdf=False)
    return config, folder / "site"


def test_every_arrival_and_stop_is_inside_every_window(event):
    _, site = event
    plan = json.loads((site / "day-ride" / "plan.json").read_text())
    windows = plan["checkpoints"]
    assert len(windows) == 4 and len(plan["plans"]) == RIDERS
    for p in plan["plans"]:
        for w, mine in zip(windows, p["checkpoints"], strict=True):
            arrival = datetime.fromisoformat(mine["arrival"])
            assert datetime.fromisoformat(w["opens"]) <= arrival
            assert arrival + timedelta(seconds=mine["stop_s"]) <= datetime.fromisoformat(w["closes"])


def test_every_rider_has_bib_wave_and_start_and_the_index_gives_the_waves(event):
    config, site = event
    starts = event_starts(config)
    plan = json.loads((site / "day-ride" / "plan.json").read_text())
    page = (site / "day-ride" / "index.html").read_text()
    for i, p in enumerate(plan["plans"]):
        rider = p["rider"]
        want = starts.of(i, 0)
        assert rider["bib"] == 500 + i and rider["wave"] == WAVES[i % len(WAVES)][0] == want.wave
        assert rider["start"] == want.at.isoformat(timespec="seconds")
        assert f'<td class="num" data-label="Start (wave)">{want.at:%H:%M:%S} ({want.wave})</td>' in page
    index = (site / "index.html").read_text()
    for wave, (_, _, minutes) in zip(starts.waves, WAVES, strict=True):
        apart = "30 s" if minutes == 0.5 else f"{minutes} min"
        span = f"{wave.first:%H:%M:%S}–{wave.last:%H:%M:%S}"
        assert f"wave {wave.name} {span} ({wave.riders} riders, {apart} apart)" in index
    assert [w.first.strftime("%H:%M") for w in starts.waves] == [s for _, s, _ in WAVES]
