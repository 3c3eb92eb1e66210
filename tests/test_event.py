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
from cardgen.plan import analyse, checkpoint_windows, make_plan
from cardgen.route.checkpoints import resolve_checkpoints
from cardgen.route.gpx import read_gpx
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
    assert "wave Early: 2 starts, first 07:30, last 07:32" in out
    assert "wave Main: 2 starts, first 08:15, last 08:16" in out


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
