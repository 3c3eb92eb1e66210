"""Cue sheet: turns from geometry, named points placed on the route."""

import numpy as np
from gpxmaker import straight, to_latlon, write_gpx

from cardgen.io.gpx import read_gpx
from cardgen.route.cues import cue_sheet, find_turns
from cardgen.route.terrain import build_terrain


def _corner(tmp_path, sign):
    x = np.concatenate([np.arange(0, 500, 10.0), np.full(50, 500.0)])
    y = np.concatenate([np.zeros(50), sign * np.arange(0, 500, 10.0)])
    lat, lon = to_latlon(x, y)
    return read_gpx(write_gpx(tmp_path / "c.gpx", lat, lon, np.full(x.size, 50.0)))


def test_right_angle_right_turn(tmp_path):
    track = _corner(tmp_path, -1)  # heading east, then south: a right turn
    (cue,) = find_turns(build_terrain(track))
    assert cue.text == "turn right"
    assert cue.turn == np.clip(cue.turn, 80, 100)
    assert abs(cue.distance - 500) < 20


def test_right_angle_left_turn(tmp_path):
    (cue,) = find_turns(build_terrain(_corner(tmp_path, +1)))
    assert cue.text == "turn left"


def test_straight_road_with_jitter_has_no_turns(tmp_path):
    x, y, _ = straight(3000, spacing=5)
    rng = np.random.default_rng(2)
    lat, lon = to_latlon(x + rng.normal(0, 1.0, x.size), y + rng.normal(0, 1.0, x.size))
    track = read_gpx(write_gpx(tmp_path / "s.gpx", lat, lon, np.zeros(x.size)))
    assert find_turns(build_terrain(track)) == []


def test_hairpin_is_a_u_turn_with_its_whole_angle(tmp_path):
    th = np.linspace(0, np.pi, 32)
    x = np.concatenate([np.arange(0, 300, 10.0), 300 + 10 * np.sin(th), np.arange(300, 0, -10.0)])
    y = np.concatenate([np.zeros(30), 10 - 10 * np.cos(th), np.full(30, 20.0)])
    lat, lon = to_latlon(x, y)
    track = read_gpx(write_gpx(tmp_path / "h.gpx", lat, lon, np.full(x.size, 50.0)))
    (cue,) = find_turns(build_terrain(track))
    assert cue.text == "U-turn left"
    assert abs(cue.turn) == np.clip(abs(cue.turn), 165, 195)  # the whole 180° corner


def test_waypoints_become_cues_in_order(tmp_path):
    x, y, _ = straight(2000, spacing=10)
    lat, lon = to_latlon(x, y)
    far_lat, far_lon = to_latlon(np.array([1000.0]), np.array([5000.0]))
    wpts = [
        {"lat": lat[150], "lon": lon[150], "name": "Second"},
        {"lat": lat[50], "lon": lon[50], "name": "First"},
        {"lat": far_lat[0], "lon": far_lon[0], "name": "Far away"},
    ]
    track = read_gpx(write_gpx(tmp_path / "w.gpx", lat, lon, np.zeros(x.size), waypoints=wpts))
    cues, warnings = cue_sheet(build_terrain(track), track)
    assert [c.text for c in cues] == ["First", "Second"]
    assert abs(cues[0].distance - 500) < 15
    assert "Far away" in warnings[0]


def _square_loop(tmp_path, waypoints):
    """A 4 km square loop starting and finishing at (0, 0), with ``waypoints`` given as
    (x, y, name): each point named where the loop passes."""
    side = np.arange(0, 1000, 10.0)
    x = np.concatenate([side, np.full(100, 1000.0), 1000 - side, np.zeros(100), [0.0]])
    y = np.concatenate([np.zeros(100), side, np.full(100, 1000.0), 1000 - side, [0.0]])
    lat, lon = to_latlon(x, y)
    marks = [
        {"lat": a[0], "lon": b[0], "name": name, "desc": "by the bandstand"}
        for (px, py, name) in waypoints
        for a, b in [to_latlon(np.array([px]), np.array([py]))]
    ]
    track = read_gpx(write_gpx(tmp_path / "loop.gpx", lat, lon, np.zeros(x.size), waypoints=marks))
    return track, build_terrain(track)


def test_the_start_place_of_a_loop_is_not_a_cue_again_at_the_finish(tmp_path):
    # the sheet's own "Finish" line stands there; before, the start place was listed
    # again at the finish distance, beside it
    track, terrain = _square_loop(tmp_path, [(5.0, 0.0, "Green"), (1000.0, 500.0, "Mill")])
    cues, _ = cue_sheet(terrain, track)
    greens = [c.distance for c in cues if c.text == "Green"]
    assert greens == [min(greens)] and greens[0] < 20.0
    assert [c.text for c in cues if c.kind == "waypoint"] == ["Green", "Mill"]


def test_a_place_passed_only_at_the_finish_keeps_its_cue(tmp_path):
    track, terrain = _square_loop(
        tmp_path, [(0.0, 30.0, "Lock gate")]
    )  # on the last side, 30 m before the end
    cues, _ = cue_sheet(terrain, track)
    (gate,) = [c for c in cues if c.text == "Lock gate"]
    assert gate.distance > terrain.length - 100.0
