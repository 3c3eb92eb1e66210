"""Track segments with gaps, the 180° meridian and the poles: the geometry is what
was ridden, with no false distance, climb or turn (checked against geographiclib,
Karney 2013, for the distances)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic

from cardgen.errors import GpxError
from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse
from cardgen.route.terrain import build_terrain

HEAD = '<?xml version="1.0" encoding="UTF-8"?>\n<gpx version="1.1" creator="t" xmlns="http://www.topografix.com/GPX/1/1">'


def _segment(lats, lons, eles) -> str:
    pts = "".join(
        f'<trkpt lat="{a:.8f}" lon="{b:.8f}"><ele>{e:.2f}</ele></trkpt>'
        for a, b, e in zip(lats, lons, eles, strict=False)
    )
    return f"<trkseg>{pts}</trkseg>"


def _line(lat0, lon0, lat1, lon1, n=200):
    return np.linspace(lat0, lat1, n), np.linspace(lon0, lon1, n)


def _length(lats, lons) -> float:
    return sum(
        Geodesic.WGS84.Inverse(a, b, c, d)["s12"]
        for a, b, c, d in zip(lats[:-1], lons[:-1], lats[1:], lons[1:], strict=False)
    )


def _write(tmp_path: Path, segments: list[str]) -> Path:
    path = tmp_path / "g.gpx"
    path.write_text(HEAD + "<trk><name>G</name>" + "".join(segments) + "</trk></gpx>")
    return path


def test_segments_500_km_apart_are_joined_without_the_gap(tmp_path):
    a_lat, a_lon = _line(-40.50, -140.30, -40.50, -140.28)  # about 1.7 km east
    b_lat, b_lon = _line(-36.00, -140.30, -36.00, -140.28)  # 500 km north of it
    path = _write(
        tmp_path, [_segment(a_lat, a_lon, np.full(200, 10.0)), _segment(b_lat, b_lon, np.full(200, 10.0))]
    )
    track = read_gpx(path)
    assert any("gap(s) between track segments" in w and "km" in w for w in track.warnings)
    terrain = build_terrain(track)
    ridden = _length(a_lat, a_lon) + _length(b_lat, b_lon)
    # haversine against the ellipsoid: within 0.6 % (docs/sources.md §9 [C])
    assert terrain.length == pytest.approx(ridden, rel=0.006)
    assert not [c for c in analyse(track, terrain).cues if c.kind == "turn"]  # the join is no turn


def test_a_short_gap_with_an_elevation_jump_makes_no_climb(tmp_path):
    a_lat, a_lon = _line(-40.500, -140.30, -40.500, -140.29)
    b_lat, b_lon = _line(-40.50017, -140.29, -40.50017, -140.28)  # 19 m south of the end
    path = _write(
        tmp_path, [_segment(a_lat, a_lon, np.full(200, 100.0)), _segment(b_lat, b_lon, np.full(200, 132.0))]
    )
    track = read_gpx(path)
    assert track.gaps and track.gaps[0].rise == pytest.approx(32.0)
    terrain = build_terrain(track)
    analysis = analyse(track, terrain)
    assert analysis.climbs == () and terrain.gain < 1.0


def test_a_join_after_a_bad_first_fix_makes_no_climb(tmp_path):
    """A logger's first two fixes after a pause 30 m above the road (invented data):
    the join levels the segments by the medians of their ends, so no climb and no
    steep grade appear at the join."""
    a_lat, a_lon = _line(-40.500, -140.30, -40.500, -140.29)
    b_lat, b_lon = _line(-40.50017, -140.29, -40.50017, -140.28)
    b_ele = np.full(200, 112.0)
    b_ele[:2] += 30.0
    path = _write(tmp_path, [_segment(a_lat, a_lon, np.full(200, 100.0)), _segment(b_lat, b_lon, b_ele)])
    track = read_gpx(path)
    terrain = build_terrain(track)
    assert analyse(track, terrain).climbs == ()
    assert np.abs(terrain.grade).max() < 0.01 and terrain.gain < 1.0


def test_segments_that_meet_are_not_gaps(tmp_path):
    lat, lon = _line(-40.5, -140.30, -40.5, -140.28, 400)
    path = _write(
        tmp_path,
        [
            _segment(lat[:200], lon[:200], np.full(200, 5.0)),
            _segment(lat[200:], lon[200:], np.full(200, 5.0)),
        ],
    )
    assert read_gpx(path).gaps == ()


def test_a_route_across_the_180_meridian(tmp_path):
    lon = np.concatenate((np.linspace(179.98, 179.9999, 100), np.linspace(-179.9999, -179.98, 100)))
    lat = np.full(200, -16.5)
    path = _write(tmp_path, [_segment(lat, lon, np.full(200, 5.0))])
    track = read_gpx(path)
    terrain = build_terrain(track)
    assert terrain.length == pytest.approx(_length(lat, lon), rel=0.006)
    assert np.all(np.abs(terrain.lon) > 179.9)  # no point across the globe
    assert not [c for c in analyse(track, terrain).cues if c.kind == "turn"]
    assert (terrain.curve_radius > 1e6).all()  # a parallel curves only with the Earth: R·cot φ ≈ 21,500 km


def test_straight_over_the_pole_is_no_turn(tmp_path):
    lat = np.concatenate((np.linspace(89.95, 89.9999, 100), np.linspace(89.9999, 89.95, 100)))
    lon = np.concatenate((np.zeros(100), np.full(100, 180.0)))
    path = _write(tmp_path, [_segment(lat, lon, np.full(200, 5.0))])
    track = read_gpx(path)
    terrain = build_terrain(track)
    assert not [c for c in analyse(track, terrain).cues if c.kind == "turn"]


def test_a_coordinate_that_underflows_is_refused(tmp_path):
    lat, lon = _line(-40.5, -140.30, -40.5, -140.28, 20)
    text = HEAD + "<trk><trkseg>" + _segment(lat, lon, np.full(20, 5.0))[8:-9] + "</trkseg></trk></gpx>"
    path = tmp_path / "u.gpx"
    path.write_text(text.replace('lat="-40.50000000"', 'lat="1e-400"', 1))
    with pytest.raises(GpxError, match="too small"):
        read_gpx(path)
