"""The GPX reader: agreement with gpxpy, GPX 1.0/1.1, routes, waypoints, hostile files."""

from pathlib import Path

import gpxpy
import numpy as np
import pytest
from gpxmaker import straight, to_latlon, write_gpx

from cardgen.errors import GpxError
from cardgen.io import gpx as gpx_reader
from cardgen.io.gpx import read_gpx
from cardgen.route import gpx as gpx_module

SAMPLES = sorted((Path(__file__).resolve().parents[1] / "sample_routes").glob("*.gpx"))


def test_there_are_sample_routes():
    assert len(SAMPLES) >= 4


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.name)
def test_points_identical_to_gpxpy(path):
    """gpxpy (an independent, widely used parser) must see the same points."""
    with open(path, encoding="utf-8") as handle:
        reference = gpxpy.parse(handle)
    points = [p for t in reference.tracks for s in t.segments for p in s.points]
    track = read_gpx(path)
    np.testing.assert_array_equal(track.lat, [p.latitude for p in points])
    np.testing.assert_array_equal(track.lon, [p.longitude for p in points])
    np.testing.assert_array_equal(track.elevation, [p.elevation for p in points])
    assert [w.name for w in track.waypoints] == [w.name for w in reference.waypoints]
    assert [w.description for w in track.waypoints] == [w.description for w in reference.waypoints]
    assert track.name == reference.name


def test_gpx_10_route_points_and_waypoint_text(tmp_path):
    x, y, _ = straight(500)
    lat, lon = to_latlon(x, y)
    path = write_gpx(
        tmp_path / "r.gpx",
        lat,
        lon,
        np.full(lat.size, 12.0),
        version="1.0",
        route=True,
        waypoints=[
            {
                "lat": lat[3],
                "lon": lon[3],
                "name": "Café <b>",
                "desc": "a & b",
                "link": "https://example.invalid/x",
            }
        ],
    )
    track = read_gpx(path)
    assert track.source == "route"
    assert track.points == lat.size
    assert track.waypoints[0].name == "Café <b>"  # text comes back as text, unescaped
    assert track.waypoints[0].description == "a & b"
    assert track.waypoints[0].link == "https://example.invalid/x"


def test_several_tracks_and_segments_are_joined_in_order(tmp_path):
    body = "".join(
        f"<trk><name>T{t}</name>"
        + "".join(
            "<trkseg>"
            + "".join(
                f'<trkpt lat="{-40.5 + 0.001 * (t * 4 + s * 2 + i)}" lon="-140.3"><ele>{t}</ele></trkpt>'
                for i in range(2)
            )
            + "</trkseg>"
            for s in range(2)
        )
        + "</trk>"
        for t in range(2)
    )
    path = tmp_path / "multi.gpx"
    path.write_text(f'<gpx version="1.1" xmlns="http://www.topografix.com/GPX/1/1">{body}</gpx>')
    track = read_gpx(path)
    assert track.points == 8
    assert np.all(np.diff(track.lat) > 0)
    assert any("2 tracks" in w for w in track.warnings)


def test_partial_elevation_is_interpolated_and_reported(tmp_path):
    x, y, d = straight(100, spacing=10)
    lat, lon = to_latlon(x, y)
    ele = np.array([0.0, 1, 2, np.nan, np.nan, 5, 6, 7, 8, 9, 10])
    track = read_gpx(write_gpx(tmp_path / "p.gpx", lat, lon, ele))
    np.testing.assert_allclose(track.elevation[3:5], [3.0, 4.0], atol=0.01)
    assert any("2 of 11" in w for w in track.warnings)


def test_times_are_read(tmp_path):
    x, y, _ = straight(20, spacing=10)
    lat, lon = to_latlon(x, y)
    times = ["2026-05-01T08:00:00Z", "2026-05-01T08:00:04.5Z", "2026-05-01T10:00:08+02:00"]
    track = read_gpx(write_gpx(tmp_path / "t.gpx", lat, lon, [1.0, 2.0, 3.0], times=times))
    assert track.time[1] - track.time[0] == pytest.approx(4.5)
    assert track.time[2] - track.time[0] == pytest.approx(8.0)


GOOD_POINTS = '<trkpt lat="-40.5" lon="-140.3"><ele>1</ele></trkpt><trkpt lat="-40.501" lon="-140.3"><ele>2</ele></trkpt>'
HEAD = '<?xml version="1.0"?>\n'


def _gpx(points=GOOD_POINTS, head=HEAD):
    return f'{head}<gpx version="1.1" xmlns="http://www.topografix.com/GPX/1/1"><trk><trkseg>{points}</trkseg></trk></gpx>'


HOSTILE = {
    "empty.gpx": ("", "empty"),
    "not-xml.gpx": ("this is not xml at all", "line 1"),
    "truncated.gpx": (_gpx()[:150], "not well-formed"),
    "not-gpx.gpx": ("<html><body>hi</body></html>", "not a GPX file"),
    "dtd.gpx": (_gpx(head=HEAD + "<!DOCTYPE gpx [<!ELEMENT gpx ANY>]>\n"), "document type"),
    "bomb.gpx": (
        _gpx(
            points=GOOD_POINTS.replace("<ele>1</ele>", "<ele>&lol9;</ele>"),
            head=HEAD
            + (
                '<!DOCTYPE gpx [<!ENTITY lol "lol">'
                + "".join(
                    f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">'
                    for i in range(1, 10)
                )
                + "]>\n"
            ),
        ),
        "document type",
    ),
    "external.gpx": (
        _gpx(
            points=GOOD_POINTS.replace("<ele>1</ele>", "<ele>&secret;</ele>"),
            head=HEAD + ('<!DOCTYPE gpx [<!ENTITY secret SYSTEM "file:///etc/passwd">]>\n'),
        ),
        "document type",
    ),
    "undeclared-entity.gpx": (
        _gpx(points=GOOD_POINTS.replace("<ele>1</ele>", "<ele>&x;</ele>")),
        "undefined entity",
    ),
    "one-point.gpx": (_gpx(points='<trkpt lat="-40.5" lon="-140.3"><ele>1</ele></trkpt>'), "at least two"),
    "no-points.gpx": (_gpx(points=""), "at least two"),
    "lat-range.gpx": (_gpx(points=GOOD_POINTS.replace('lat="-40.5"', 'lat="95"')), "lat 95.0 is outside"),
    "lon-range.gpx": (
        _gpx(points=GOOD_POINTS.replace('lon="-140.3"', 'lon="-190"', 1)),
        "lon -190.0 is outside",
    ),
    "nan.gpx": (
        _gpx(points=GOOD_POINTS.replace('lat="-40.5"', 'lat="nan"')),
        "trackpoint 1: lat is 'nan', not a finite",
    ),
    "missing-lat.gpx": (_gpx(points=GOOD_POINTS.replace('lat="-40.5" ', "")), "lat is None"),
    "text-lat.gpx": (_gpx(points=GOOD_POINTS.replace('lat="-40.5"', 'lat="north"')), "'north', not a number"),
    "no-elevation.gpx": (
        _gpx(points=GOOD_POINTS.replace("<ele>1</ele>", "").replace("<ele>2</ele>", "")),
        "no trackpoint has an elevation",
    ),
    "same-point.gpx": (_gpx(points=GOOD_POINTS.replace('lat="-40.501"', 'lat="-40.5"')), "long"),
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_hostile_file_is_one_clear_error(tmp_path, cli, name):
    """In this process: the real process's refusal of hostile files (no traceback,
    one line) is test_hostile's ``test_hostile_file_is_refused_in_a_real_process``."""
    text, fragment = HOSTILE[name]
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    code, out, err = cli("route", str(path))
    assert code == 1, (out, err)
    assert "Traceback" not in err
    assert str(path) in err
    assert fragment in err
    assert len(err.strip().splitlines()) == 1
    assert "root:" not in out + err  # nothing of /etc/passwd came through


def test_directory_and_missing_file(tmp_path):
    with pytest.raises(GpxError, match="no such file"):
        read_gpx(tmp_path / "nope.gpx")
    with pytest.raises(GpxError, match="not a regular file"):
        read_gpx(tmp_path)


def test_size_and_point_limits(tmp_path, monkeypatch):
    x, y, _ = straight(500, spacing=10)
    lat, lon = to_latlon(x, y)
    path = write_gpx(tmp_path / "p.gpx", lat, lon, np.zeros(lat.size))
    monkeypatch.setattr(gpx_module, "MAX_POINTS", 20)
    with pytest.raises(GpxError, match="more than 20 points"):
        read_gpx(path)
    monkeypatch.setattr(gpx_reader, "MAX_FILE_BYTES", 1000)
    with pytest.raises(GpxError, match="larger than"):
        read_gpx(path)


def test_elevation_out_of_range_is_treated_as_missing(tmp_path):
    x, y, _ = straight(40, spacing=10)
    lat, lon = to_latlon(x, y)
    track = read_gpx(write_gpx(tmp_path / "e.gpx", lat, lon, [10.0, 1e5, 30.0, 40.0, 50.0]))
    assert track.elevation[1] == pytest.approx(20.0, abs=0.1)
    assert track.warnings
