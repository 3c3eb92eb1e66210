"""Terrain: distances against geographiclib, smoothing on synthetic profiles."""

import numpy as np
import pytest
from geographiclib.geodesic import Geodesic
from gpxmaker import profile_gpx, straight, to_latlon, write_gpx

from cardgen.io.gpx import read_gpx
from cardgen.route.profile_fit import NOISE_FLOOR
from cardgen.route.terrain import (
    GAIN_DEADBAND,
    bearing,
    build_terrain,
    cumulative_distance,
    elevation_gain,
    remove_spikes,
    running_median,
    smooth_elevation,
)

WGS84 = Geodesic.WGS84


# Karney (2013), "Algorithms for geodesics", J. Geodesy 87:43–55, via geographiclib:
# haversine on the mean radius must agree within 0.6 % (docs/sources.md §9 [C]).
@pytest.mark.parametrize(
    "lat1, lon1, lat2, lon2",
    [
        (0, 0, 0, 1),
        (0, 0, 1, 0),
        (51.5, -0.1, 48.85, 2.35),
        (45, 6, 45.01, 6.01),
        (-40.5, -140.3, -40.49, -140.31),
        (70, 20, 70.005, 20.02),
        (-80, 10, -80.009, 10.0),
    ],
)
def test_distance_against_geographiclib(lat1, lat2, lon1, lon2):
    geodesic = WGS84.Inverse(lat1, lon1, lat2, lon2)["s12"]
    ours = cumulative_distance([lat1, lat2], [lon1, lon2])[-1]
    assert ours == pytest.approx(geodesic, rel=0.006)


def test_distance_check_values_references():
    # geographiclib 2.0 Inverse, docs/sources.md §9 [C]: (0,0)→(0,1) 111319.4908 m;
    # haversine on R₁ gives 111195.080 m.
    assert cumulative_distance([0, 0], [0, 1])[-1] == pytest.approx(111195.080, abs=0.01)


def test_distance_along_sample_polyline_against_geographiclib():
    rng = np.random.default_rng(5)
    lat = -40.5 + np.cumsum(rng.normal(0, 0.0005, 400))
    lon = -140.3 + np.cumsum(rng.normal(0, 0.0005, 400))
    geodesic = sum(WGS84.Inverse(lat[i], lon[i], lat[i + 1], lon[i + 1])["s12"] for i in range(399))
    assert cumulative_distance(lat, lon)[-1] == pytest.approx(geodesic, rel=0.006)


def test_bearing_compass_points():
    assert np.degrees(bearing(0, 0, 1, 0)) == pytest.approx(0.0)
    assert np.degrees(bearing(0, 0, 0, 1)) == pytest.approx(90.0)
    assert np.degrees(bearing(0, 0, -1, 0)) == pytest.approx(180.0)
    # geographiclib azimuth at the start (Karney 2013), on a sphere-vs-ellipsoid tolerance
    azi = WGS84.Inverse(-40.5, -140.3, -40.4, -140.2)["azi1"]
    assert np.degrees(bearing(-40.5, -140.3, -40.4, -140.2)) == pytest.approx(azi, abs=0.3)


def test_pure_ramp_passes_through_unchanged(tmp_path):
    d = np.arange(0.0, 3001.0, 10.0)
    e = 100 + 0.06 * d
    t = build_terrain(read_gpx(profile_gpx(tmp_path / "ramp.gpx", d, e)))
    assert t.gain == pytest.approx(180.0, rel=0.01)
    np.testing.assert_allclose(t.grade, 0.06, rtol=0.01)
    assert t.length == pytest.approx(3000.0, rel=0.006)


def test_ramp_between_flats_keeps_gain(tmp_path):
    d = np.arange(0.0, 4001.0, 10.0)
    e = np.interp(d, [0, 1000, 3000, 4000], [100, 100, 220, 220])
    t = build_terrain(read_gpx(profile_gpx(tmp_path / "r.gpx", d, e)))
    assert t.gain == pytest.approx(120.0, rel=0.01)
    middle = (t.distance[:-1] > 1200) & (t.distance[:-1] < 2800)
    np.testing.assert_allclose(t.grade[middle], 0.06, rtol=0.01)


@pytest.mark.parametrize("seed", range(5))
def test_flat_noise_gives_almost_no_gain(tmp_path, seed):
    rng = np.random.default_rng(seed)
    d = np.arange(0.0, 10001.0, 10.0)
    e = 100 + rng.normal(0, 3.0, d.size)  # σ = 3 m GPS-like noise
    t = build_terrain(read_gpx(profile_gpx(tmp_path / "n.gpx", d, e)))
    assert t.gain < 10.0  # on 10 km of flat road
    assert t.loss < 10.0


def test_single_spike_is_removed():
    e = np.full(50, 100.0)
    e[20] = 140.0
    np.testing.assert_array_equal(remove_spikes(e), np.full(50, 100.0))


def test_running_median_keeps_monotone_profiles():
    e = np.cumsum(np.abs(np.random.default_rng(1).normal(0, 1, 200)))
    np.testing.assert_array_equal(remove_spikes(e), e)


def test_smoothing_keeps_a_vertical_curve_within_the_noise_floor():
    """A parabolic crest from +20 % to −20 % over 2 km (the shape of a road's vertical
    curve) comes back as straight pieces within 1.5 × NOISE_FLOOR of it, their grades
    within 1.25 points of the curve's: a chord of length L on curvature c is off by
    c·L²/8 in height and c·L/2 in grade (geometry of the parabola)."""
    x = np.arange(0.0, 2000.0, 10.0)
    e = 500 - 1e-4 * (x - 1000) ** 2
    fit = smooth_elevation(e, 10.0)
    assert np.max(np.abs(fit - e)) <= 1.5 * NOISE_FLOOR
    true_grade = -2e-4 * (x[:-1] + 5.0 - 1000)
    assert np.max(np.abs(np.diff(fit) / 10.0 - true_grade)) <= 0.0125


def test_gain_deadband():
    zigzag = np.tile([0.0, GAIN_DEADBAND * 0.9], 50)
    assert elevation_gain(zigzag) == (0.0, 0.0)
    steps = np.array([0.0, 10.0, 4.0, 20.0])
    assert elevation_gain(steps) == (26.0, 6.0)


def test_hairpin_has_small_radius(tmp_path):
    th = np.linspace(0, np.pi, 32)
    x = np.concatenate([np.arange(0, 300, 10.0), 300 + 10 * np.sin(th), np.arange(300, 0, -10.0)])
    y = np.concatenate([np.zeros(30), 10 - 10 * np.cos(th), np.full(30, 20.0)])
    lat, lon = to_latlon(x, y)
    t = build_terrain(read_gpx(write_gpx(tmp_path / "h.gpx", lat, lon, np.full(x.size, 50.0))))
    assert t.curve_radius.min() == pytest.approx(10.0, rel=0.25)
    assert np.median(t.curve_radius[np.isfinite(t.curve_radius)]) > 100


def test_resampled_grid_is_uniform(tmp_path):
    x, y, d = straight(1234.0, spacing=7.0)
    lat, lon = to_latlon(x, y)
    t = build_terrain(read_gpx(write_gpx(tmp_path / "g.gpx", lat, lon, np.zeros(x.size))))
    np.testing.assert_allclose(np.diff(t.distance), t.step)
    assert t.step <= 10.0
    assert t.grade.size == t.heading.size == t.distance.size - 1


def test_running_median_matches_scipy():
    """scipy.ndimage.median_filter is the reference running median (Tukey 1977)."""
    from scipy.ndimage import median_filter

    e = np.random.default_rng(8).normal(0, 5, 500)
    np.testing.assert_array_equal(running_median(e, 5), median_filter(e, size=5, mode="nearest"))
