"""What plan hands render for one route (`plan.views.route_job`): the windows, legs,
rates, spread and day rows of its riders, made once, and the same with or without
start times wherever a start is not what they depend on."""

from __future__ import annotations

import json
from datetime import datetime
from pathlib import Path

import pytest

from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.plan.model import Entry
from cardgen.plan.route_plans import RoutePlans
from cardgen.plan.views import route_job
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.render import exports
from cardgen.route.checkpoints import resolve_checkpoints
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


@pytest.fixture(scope="module")
def day_ride():
    track = read_gpx(SAMPLES / "day-ride.gpx")
    analysis = analyse(track, build_terrain(track))
    checkpoints = tuple(resolve_checkpoints((), track, analysis.terrain, "day-ride.gpx"))
    lib = builtin_vehicles()
    plans = [
        make_plan(analysis, rider=Rider.for_vehicle(lib[v], flat_power=w, cp=w + 60))
        for v, w in (("road-hoods", 200.0), ("city-upright", 110.0))
    ]
    return RoutePlans(analysis, checkpoints, plans), plans


def _job(day_ride, start):
    planned, plans = day_ride
    entries = [Entry(f"R{i}", start, None, p) for i, p in enumerate(plans)]
    return route_job("day-ride", "Day", "", planned, entries, 900.0, None, 13.0)


def test_legs_end_at_every_checkpoint_and_the_finish_with_or_without_starts(day_ride):
    planned, _ = day_ride
    assert planned.checkpoints, "the demo's day ride has checkpoints"
    ends = [c.name for c in sorted(planned.checkpoints, key=lambda c: c.distance)] + ["Finish"]
    for start in (None, datetime(2027, 4, 18, 8, 0)):
        job = _job(day_ride, start)
        for entry in job.riders:
            assert [leg.to for leg in entry.legs] == ends
            # the legs' riding times add up to the ride's (no stops are planned here)
            assert sum(leg.time for leg in entry.legs) == pytest.approx(entry.plan.finish_elapsed)
            # the carbohydrate guide by the ride's length (Thomas, Erdman & Burke 2016,
            # Table 4): over 2.5 h, 60–90 g/h; 1–2.5 h, 30–60 g/h
            hours = entry.plan.finish_elapsed / 3600
            assert entry.fuel_rates[0] == ((60.0, 90.0) if hours > 2.5 else (30.0, 60.0))
        # plan.json carries the card's legs, start or not
        data = json.loads(
            exports.plan_json_text("Day", [e.plan for e in job.riders], job.riders, job.windows)
        )
        assert [leg["to"] for leg in data["plans"][0]["legs"]] == ends


def test_windows_and_day_rows_only_when_every_rider_has_a_start(day_ride):
    planned, _ = day_ride
    without = _job(day_ride, None)
    assert without.windows == () and without.day == () and without.together == ()
    job = _job(day_ride, datetime(2027, 4, 18, 8, 0))
    assert [w.checkpoint.name for w in job.windows] == [d.name for d in job.day]
    assert len(job.windows) == len(planned.checkpoints)
    (group,) = job.together  # both start together
    assert group["riders"] == ["R0", "R1"]
