"""The contents of every export: plan.json, climbs.csv, route.gpx and route --json,
read back and compared with the plans they come from."""

import csv
import dataclasses
import io
import json
import math
import xml.etree.ElementTree as ET
from pathlib import Path

import gpxpy
import gpxpy.gpx
import pytest

from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.render import exports
from cardgen.route.checkpoints import checkpoints_from_waypoints
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


@pytest.fixture(scope="module")
def day_ride():
    track = read_gpx(SAMPLES / "day-ride.gpx")
    analysis = analyse(track, build_terrain(track))
    lib = builtin_vehicles()
    plans = [make_plan(analysis, rider=Rider.for_vehicle(lib[n])) for n in ("road-hoods", "e-assist-cargo")]
    return analysis, plans


def test_plan_json_holds_each_plans_numbers(day_ride):
    _, plans = day_ride
    data = json.loads(exports.plan_json_text("Day ride", plans))
    assert data["route"] == "Day ride" and len(data["plans"]) == 2
    for plan, entry in zip(plans, data["plans"], strict=True):
        assert entry["rider"]["vehicle"] == plan.rider.vehicle.name
        assert entry["totals"]["time_s"] == pytest.approx(plan.totals.time, abs=0.05)
        assert entry["totals"]["energy_j"] == pytest.approx(plan.totals.energy, abs=0.5)
        assert len(entry["climbs"]) == len(plan.climbs) and len(entry["cues"]) == len(plan.cues)
        for row, climb in zip(plan.climbs, entry["climbs"], strict=True):
            assert climb["start_m"] == pytest.approx(row.climb.start_distance, abs=0.05)
            assert climb["power_for_target_w"] == pytest.approx(row.power_for_target, abs=0.05)
            assert [w["code"] for w in climb["warnings"]] == [w.code for w in row.warnings]
            assert all(w["text"] for w in climb["warnings"])
    battery = data["plans"][1]["totals"]["battery_j"]
    assert (
        battery == pytest.approx(plans[1].totals.battery, abs=0.5)
        and data["plans"][0]["totals"]["battery_j"] is None
    )


def test_climbs_csv_has_a_row_per_rider_and_climb(day_ride):
    _, plans = day_ride
    rows = list(csv.DictReader(io.StringIO(exports.climbs_csv_text(plans))))
    assert len(rows) == sum(len(p.climbs) for p in plans)
    first = rows[0]
    row = plans[0].climbs[0]
    assert first["rider"] == plans[0].rider.name and first["climb"] == "1"
    assert float(first["start_km"]) == pytest.approx(row.climb.start_distance / 1000, abs=0.005)
    assert float(first["gain_m"]) == pytest.approx(row.climb.height, abs=0.5)
    assert float(first["time_min"]) == pytest.approx(row.time / 60, abs=0.05)


def test_route_gpx_reads_back_with_a_waypoint_at_every_climb_foot_and_checkpoint(day_ride):
    analysis, _ = day_ride
    checkpoints = checkpoints_from_waypoints(analysis.track, analysis.terrain)
    text = exports.route_gpx_text(analysis.track, analysis.terrain, analysis.climbs, checkpoints)
    gpx = gpxpy.parse(text)
    points = gpx.tracks[0].segments[0].points
    assert len(points) == analysis.terrain.distance.size
    climbs = [w for w in gpx.waypoints if w.type == "climb"]
    assert len(climbs) == len(analysis.climbs)
    for waypoint, climb in zip(climbs, analysis.climbs, strict=True):
        assert waypoint.latitude == pytest.approx(analysis.terrain.lat[climb.start], abs=1e-7)
        assert waypoint.longitude == pytest.approx(analysis.terrain.lon[climb.start], abs=1e-7)
    assert [w.name for w in gpx.waypoints if w.type == "checkpoint"] == [c.name for c in checkpoints]


def _gpxpy_route(track, terrain, climbs, checkpoints) -> str:
    """The route's GPX as gpxpy (an independent, widely used GPX library) writes it:
    the reference that cardgen's own writer is read back against."""
    gpx = gpxpy.gpx.GPX()
    gpx.name = track.name
    gpx.creator = "cardgen"
    segment = gpxpy.gpx.GPXTrackSegment()
    for la, lo, el in zip(terrain.lat, terrain.lon, terrain.elevation, strict=True):
        segment.points.append(
            gpxpy.gpx.GPXTrackPoint(round(float(la), 7), round(float(lo), 7), elevation=round(float(el), 1))
        )
    trk = gpxpy.gpx.GPXTrack(name=track.name)
    trk.segments.append(segment)
    gpx.tracks.append(trk)
    marks = [
        (c.start, f"Climb {n}", f"{c.length:.0f} m at {c.avg_grade * 100:.1f} %, +{c.height:.0f} m", "climb")
        for n, c in enumerate(climbs, 1)
    ]
    marks += [(int(round(c.distance / terrain.step)), c.name, None, "checkpoint") for c in checkpoints]
    for i, name, desc, kind in marks:
        gpx.waypoints.append(
            gpxpy.gpx.GPXWaypoint(
                round(float(terrain.lat[i]), 7),
                round(float(terrain.lon[i]), 7),
                elevation=round(float(terrain.elevation[i]), 1),
                name=name,
                description=desc,
                type=kind,
            )
        )
    return gpx.to_xml(version="1.1")


def _read_back(text: str) -> tuple:
    """Everything gpxpy reads from a route's GPX: names, creator, every track point and
    waypoint with its fields."""
    gpx = gpxpy.parse(text)
    points = [
        (p.latitude, p.longitude, p.elevation) for t in gpx.tracks for s in t.segments for p in s.points
    ]
    waypoints = [(w.latitude, w.longitude, w.elevation, w.name, w.description, w.type) for w in gpx.waypoints]
    return gpx.name, gpx.creator, gpx.version, [t.name for t in gpx.tracks], points, waypoints


def test_route_gpx_reads_back_as_gpxpys_own_file_does(day_ride):
    """The GPX written as text reads back with gpxpy exactly as the file gpxpy itself
    writes from the same route (every point to the bit, every waypoint and name)."""
    analysis, _ = day_ride
    checkpoints = checkpoints_from_waypoints(analysis.track, analysis.terrain)
    assert checkpoints and analysis.climbs  # both kinds of waypoint are compared
    ours = exports.route_gpx_text(analysis.track, analysis.terrain, analysis.climbs, checkpoints)
    reference = _gpxpy_route(analysis.track, analysis.terrain, analysis.climbs, checkpoints)
    assert _read_back(ours) == _read_back(reference)


def test_route_gpx_escapes_names_from_the_files(day_ride):
    """Names come from GPX files and site.toml: markup is escaped, characters XML 1.0
    forbids are dropped, so the file always parses and says what was meant."""
    analysis, _ = day_ride
    hostile = 'Tom & Jerry\'s <b>"loop"</b>\x01\x1f ]]> Łódź'
    track = dataclasses.replace(analysis.track, name=hostile)
    checkpoint = dataclasses.replace(
        checkpoints_from_waypoints(analysis.track, analysis.terrain)[0], name=hostile
    )
    text = exports.route_gpx_text(track, analysis.terrain, analysis.climbs, [checkpoint])
    gpx = gpxpy.parse(text)
    meant = 'Tom & Jerry\'s <b>"loop"</b> ]]> Łódź'
    assert gpx.name == gpx.tracks[0].name == meant
    assert [w.name for w in gpx.waypoints if w.type == "checkpoint"] == [meant]
    ET.fromstring(text.encode("utf-8"))  # well-formed for a strict XML parser too


def test_route_json_is_rounded_and_always_valid(day_ride):
    _, plans = day_ride
    data = exports.route_json(plans[0])
    text = json.dumps(data, allow_nan=False)  # raises on NaN or infinity

    def floats(tree):
        if isinstance(tree, dict):
            for v in tree.values():
                yield from floats(v)
        elif isinstance(tree, list):
            for v in tree:
                yield from floats(v)
        elif isinstance(tree, float):
            yield tree

    assert all(round(x, 4) == x for x in floats(data))
    assert exports._rounded({"a": math.inf, "b": [math.nan, 1.234567]}) == {"a": None, "b": [None, 1.2346]}
    # no negative zero: a flat route's loss printed as -0.0
    assert json.dumps(exports._rounded({"loss": -0.0, "tiny": -0.00001})) == '{"loss": 0.0, "tiny": 0.0}'
    assert json.loads(text)["route"]["distance_km"] == pytest.approx(plans[0].terrain.length / 1000, abs=1e-4)
