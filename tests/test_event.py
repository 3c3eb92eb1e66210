"""Start waves, riders' own starts, and checkpoint windows that agree with every card."""

from __future__ import annotations

import json
import shutil
from datetime import timedelta
from pathlib import Path

import numpy as np
import pytest

from cardgen.cli import main
from cardgen.config import load_config, rider_start
from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, checkpoint_windows, make_plan
from cardgen.route.checkpoints import resolve_checkpoints
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
SITE = """
[event]
date = "2027-04-18"
start = "08:00"
start_interval_min = 1
checkpoint_margin_min = 20

[[waves]]
name = "Early"
start = "07:30"
interval_min = 2
riders = ["Handcycle 1", "Handcycle 2"]

[[waves]]
name = "Main"
start = "08:15"
interval_min = 1
routes = ["day-ride"]

[[waves]]
name = "Late"
start = "09:40"
interval_min = 3
routes = ["day-ride"]

[[routes]]
gpx = "day-ride.gpx"

[[riders]]
name = "Handcycle 1"
vehicle = "handcycle"
[[riders]]
name = "Handcycle 2"
vehicle = "handcycle"
[[riders]]
name = "Road 1"
vehicle = "road-hoods"
bib = 101
[[riders]]
name = "Road 2"
vehicle = "road-drops"
[[riders]]
name = "Own start"
vehicle = "tandem"
start = "10:05"
"""


@pytest.fixture
def event(tmp_path):
    shutil.copy(SAMPLES / "day-ride.gpx", tmp_path)
    (tmp_path / "site.toml").write_text(SITE, encoding="utf-8")
    return load_config(tmp_path / "site.toml")


def test_starts_follow_waves_and_the_riders_own(event):
    route = event.routes[0]
    starts = {rc.rider.name: rider_start(event, i, route) for i, rc in enumerate(event.riders)}
    assert [(s.strftime("%H:%M"), w) for s, w in (starts["Handcycle 1"], starts["Handcycle 2"])] == [
        ("07:30", "Early"),
        ("07:32", "Early"),
    ]
    assert [(s.strftime("%H:%M"), w) for s, w in (starts["Road 1"], starts["Road 2"])] == [
        ("08:15", "Main"),
        ("08:16", "Main"),
    ]
    assert starts["Own start"][0].strftime("%H:%M") == "10:05" and starts["Own start"][1] is None
    assert event.riders[2].bib == 101


def test_every_arrival_lies_inside_every_window_with_the_margin(event):
    route = event.routes[0]
    track = read_gpx(route.gpx)
    analysis = analyse(track, build_terrain(track))
    checkpoints = resolve_checkpoints(route.checkpoints, track, analysis.terrain, str(route.gpx))
    plans = [make_plan(analysis, rider=rc.rider) for rc in event.riders]
    starts = [rider_start(event, i, route)[0] for i in range(len(event.riders))]
    windows, finish = checkpoint_windows(plans, checkpoints, starts, event.checkpoint_margin)
    margin = timedelta(seconds=event.checkpoint_margin)
    for window in [*windows, finish]:
        for plan, start in zip(plans, starts, strict=True):
            seconds = float(np.interp(window.checkpoint.distance, plan.terrain.distance, plan.ride.elapsed))
            arrival = start + timedelta(seconds=seconds)
            assert window.opens + margin <= arrival <= window.closes - margin


def test_check_prints_each_wave(event, capsys):
    assert main(["check", str(event.source)]) == 0
    out = capsys.readouterr().out
    # the interval too: an organiser checks it against the waves they wrote
    assert "wave Early: 2 starts, first 07:30, last 07:32, 2 min apart\n" in out
    assert "wave Main: 2 starts, first 08:15, last 08:16, 1 min apart\n" in out


def test_plan_json_carries_starts_bibs_waves_and_windows(event, tmp_path):
    out = tmp_path / "site"
    assert main(["build", str(event.source), "-o", str(out), "--no-pdf", "--jobs", "1"]) == 0
    data = json.loads((out / "day-ride" / "plan.json").read_text())
    assert data["checkpoints"] and {"name", "distance_m", "opens", "closes"} <= set(data["checkpoints"][0])
    road = next(p for p in data["plans"] if p["rider"]["name"] == "Road 1")
    assert road["rider"]["bib"] == 101 and road["rider"]["wave"] == "Main"
    assert road["rider"]["start"] == "2027-04-18T08:15"
    assert [c["name"] for c in road["checkpoints"]] == [c["name"] for c in data["checkpoints"]]
    assert road["finish"] > road["rider"]["start"]


STOPS = """
[[routes]]
gpx = "day-ride.gpx"
checkpoints = ["Checkpoint 1: Brenquist Cross", "Checkpoint 2: Ossivel Hall", 62.5]
stops_min = [5, 30, 0]
"""


def _with(tmp_path, route_text, event_extra=""):
    text = SITE.replace('[[routes]]\ngpx = "day-ride.gpx"\n', route_text).replace(
        "checkpoint_margin_min = 20\n", "checkpoint_margin_min = 20\n" + event_extra
    )
    shutil.copy(SAMPLES / "day-ride.gpx", tmp_path)
    (tmp_path / "site.toml").write_text(text, encoding="utf-8")
    return load_config(tmp_path / "site.toml")


def _plans(config):
    route = config.routes[0]
    track = read_gpx(route.gpx)
    analysis = analyse(track, build_terrain(track))
    checkpoints = resolve_checkpoints(
        route.checkpoints, track, analysis.terrain, str(route.gpx), stops=route.stops, stop=route.stop
    )
    stops = tuple((c.distance, c.stop) for c in checkpoints)
    plans = [make_plan(analysis, rider=rc.rider, stops=stops) for rc in config.riders]
    starts = [rider_start(config, i, route)[0] for i in range(len(config.riders))]
    return checkpoints, plans, starts


def test_stops_delay_every_later_arrival_and_the_finish_and_the_windows_hold_them(tmp_path):
    """Three waves, an own start and stops of 5, 30 and 0 min: each arrival is the
    riding time plus the stops before it (by hand), the finish carries all 35 min, and
    every arrival lies in its window with the margin."""
    config = _with(tmp_path, STOPS)
    checkpoints, plans, starts = _plans(config)
    assert [c.stop for c in checkpoints] == [300.0, 1800.0, 0.0]
    for plan in plans:
        riding = [float(np.interp(c.distance, plan.terrain.distance, plan.ride.elapsed)) for c in checkpoints]
        assert [plan.elapsed_at(c.distance) for c in checkpoints] == pytest.approx(
            [riding[0], riding[1] + 300, riding[2] + 2100]
        )
        assert plan.finish_elapsed == pytest.approx(plan.ride.elapsed[-1] + 2100)
        later = [t for t in plan.cues if t.cue.distance > checkpoints[1].distance + 1]
        moving = float(np.interp(later[0].cue.distance, plan.terrain.distance, plan.ride.elapsed))
        assert later[0].elapsed == pytest.approx(moving + 2100)
    windows, finish = checkpoint_windows(plans, checkpoints, starts, config.checkpoint_margin)
    margin = timedelta(seconds=config.checkpoint_margin)
    for window in [*windows, finish]:
        for plan, start in zip(plans, starts, strict=True):
            arrival = start + timedelta(seconds=plan.elapsed_at(window.checkpoint.distance))
            assert window.opens + margin <= arrival <= window.closes - margin


def test_windows_by_the_speed_rule_are_distance_over_speed_from_the_starts(tmp_path):
    """min_kmh 12 and max_kmh 30 (common practice for timed events): a checkpoint at
    62.5 km opens at the first start (07:30) + 62.5 / 30 h = 09:35 and closes at the
    last start (10:05) + 62.5 / 12 h = 15:17:30, to the minute outward 15:18."""
    config = _with(tmp_path, STOPS.replace("stops_min = [5, 30, 0]\n", ""), "min_kmh = 12\nmax_kmh = 30\n")
    assert config.speed_rule == pytest.approx((12 / 3.6, 30 / 3.6))
    checkpoints, plans, starts = _plans(config)
    windows, _ = checkpoint_windows(plans, checkpoints, starts, config.checkpoint_margin, config.speed_rule)
    at = next(w for w in windows if w.checkpoint.distance == 62500.0)
    assert (at.opens.strftime("%H:%M"), at.closes.strftime("%H:%M")) == ("09:35", "15:18")


@pytest.mark.parametrize(
    "route_text, event_extra, message",
    [
        (STOPS.replace("[5, 30, 0]", "[5, 30]"), "", "2 entries for 3 checkpoints"),
        (STOPS.replace("[5, 30, 0]", "[5, 300, 0]"), "", "minutes between 0 and 240"),
        (STOPS, "min_kmh = 12\n", "min_kmh and max_kmh go together"),
        (STOPS, "min_kmh = 30\nmax_kmh = 12\n", "the slowest below the fastest"),
    ],
)
def test_stop_and_speed_rule_mistakes_are_named(tmp_path, route_text, event_extra, message):
    from cardgen.errors import ConfigError

    with pytest.raises(ConfigError, match=message):
        _with(tmp_path, route_text, event_extra)


def test_cards_show_the_riders_arrival_beside_the_window_and_the_stop(tmp_path):
    config = _with(tmp_path, STOPS)
    out = tmp_path / "site"
    assert main(["build", str(config.source), "-o", str(out), "--no-pdf", "--jobs", "1"]) == 0
    data = json.loads((out / "day-ride" / "plan.json").read_text())
    road = next(p for p in data["plans"] if p["rider"]["name"] == "Road 1")
    assert [c["stop_s"] for c in road["checkpoints"]] == [300, 1800, 0]
    windows = {c["name"]: (c["opens"], c["closes"]) for c in data["checkpoints"]}
    for c in road["checkpoints"]:
        opens, closes = windows[c["name"]]
        assert opens <= c["arrival"] <= closes


def test_group_spread_and_regroup_wait_by_hand():
    """Three riders starting together on the day ride with its checkpoints: at each
    climb top and checkpoint the spread is last − first arrival, and the regroup wait
    is the largest minus the smallest time since the point before (checked by hand
    from the plans)."""
    from datetime import datetime

    from cardgen.plan.event import group_spread
    from cardgen.plan.model import Entry, RouteJob
    from cardgen.profiles.riders import Rider
    from cardgen.profiles.vehicles import builtin_vehicles

    track = read_gpx(SAMPLES / "day-ride.gpx")
    analysis = analyse(track, build_terrain(track))
    checkpoints = resolve_checkpoints((), track, analysis.terrain, "day-ride.gpx")
    lib = builtin_vehicles()
    start = datetime(2027, 4, 18, 8, 0)
    plans = [
        make_plan(analysis, rider=Rider.for_vehicle(lib[v], flat_power=w, cp=w + 60))
        for v, w in (("road-hoods", 200.0), ("city-upright", 110.0), ("tandem", 260.0))
    ]
    entries = tuple(Entry(f"R{i}", start, None, p) for i, p in enumerate(plans))
    job = RouteJob("day-ride", "Day", "", analysis, tuple(checkpoints), entries)
    (group,) = group_spread(job)
    assert group["riders"] == ["R0", "R1", "R2"]
    names = [r["name"] for r in group["rows"]]
    assert names[-1] == "Finish" and len(names) == len(analysis.climbs) + len(checkpoints) + 1
    before = [0.0, 0.0, 0.0]
    for row in group["rows"]:
        at = [p.elapsed_at(row["distance"]) for p in plans]
        assert row["spread"] == pytest.approx(max(at) - min(at))
        legs = [a - b for a, b in zip(at, before, strict=True)]
        assert row["wait"] == pytest.approx(max(legs) - min(legs))
        assert row["first"] == start + timedelta(seconds=min(at))
        before = at


def test_the_organisers_cue_texts_replace_the_gpxs(tmp_path):
    route = STOPS.replace(
        "stops_min = [5, 30, 0]\n", 'cue_texts = ["6.2 = Left at the chapel, then climb"]\n'
    )
    config = _with(tmp_path, route)
    out = tmp_path / "site"
    assert main(["build", str(config.source), "-o", str(out), "--no-pdf", "--jobs", "1"]) == 0
    data = json.loads((out / "day-ride" / "plan.json").read_text())
    texts = [c["text"] for c in data["plans"][0]["cues"]]
    assert (
        texts.count("Left at the chapel, then climb") == 1 and "turn right" in texts
    )  # only that one changed
    assert "Left at the chapel, then climb" in (out / "day-ride" / "index.html").read_text()


@pytest.mark.parametrize(
    "entry, message",
    [("6.2 Left at the chapel", "is not like"), ("50.0 = Nowhere", "no cue within 150 m of 50 km")],
)
def test_cue_text_mistakes_are_named(tmp_path, capsys, entry, message):
    route = STOPS.replace("stops_min = [5, 30, 0]\n", f'cue_texts = ["{entry}"]\n')
    shutil.copy(SAMPLES / "day-ride.gpx", tmp_path)
    (tmp_path / "site.toml").write_text(
        SITE.replace('[[routes]]\ngpx = "day-ride.gpx"\n', route), encoding="utf-8"
    )
    assert main(["build", str(tmp_path / "site.toml"), "-o", str(tmp_path / "out"), "--no-pdf"]) == 1
    assert message in capsys.readouterr().err
