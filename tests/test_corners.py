"""Corner radii from the geometry of the whole corner (cardgen.route.corners).

The synthetic corners are the simple curve of road design (a straight, a circular arc
tangent to it, a straight): for a deflection Θ and radius R the tangent length is
R·tan(Θ/2) and a U-turn's two straights are 2R apart (AASHTO, A Policy on Geometric
Design of Highways and Streets, 7th ed. 2018, §3.3, horizontal alignment). Points are
sampled on the true path every 5 m and every 20 m, at several phases.
"""

from __future__ import annotations

import numpy as np
import pytest
from gpxmaker import to_latlon, write_gpx

from cardgen.io.gpx import read_gpx
from cardgen.route.corners import find_corners
from cardgen.route.geodesy import cumulative_distance
from cardgen.route.terrain import build_terrain

RADII = (5.0, 8.0, 12.0, 25.0, 50.0)
LEG = 200.0


def corner_path(radius: float, turn_deg: float, spacing: float, phase: float = 0.0):
    """Points every ``spacing`` m on: 200 m east, a left arc of ``radius`` turning
    ``turn_deg``, 200 m on. Also says which points lie inside the arc, off both
    straights' lines by more than 0.5 m."""
    th = np.radians(turn_deg)
    arc = radius * th
    s = np.arange(phase, LEG + arc + LEG, spacing)
    x, y = np.empty_like(s), np.empty_like(s)
    a = s < LEG
    x[a], y[a] = s[a] - LEG, 0.0
    b = (s >= LEG) & (s < LEG + arc)
    phi = (s[b] - LEG) / radius
    x[b], y[b] = radius * np.sin(phi), radius * (1 - np.cos(phi))
    c = s >= LEG + arc
    t = s[c] - LEG - arc
    x[c] = radius * np.sin(th) + t * np.cos(th)
    y[c] = radius * (1 - np.cos(th)) + t * np.sin(th)
    off_in = radius * (1 - np.cos(phi))
    off_out = radius * (1 - np.cos(th - phi))
    pinned = bool(np.any((off_in > 0.5) & (off_out > 0.5)))
    return x, y, pinned


def fitted(radius, turn_deg, spacing, phase):
    x, y, pinned = corner_path(radius, turn_deg, spacing, phase)
    lat, lon = to_latlon(x, y)
    corners = find_corners(lat, lon, cumulative_distance(lat, lon))
    return corners, pinned


@pytest.mark.parametrize("turn", [90.0, 180.0])
@pytest.mark.parametrize("radius", RADII)
def test_radius_of_corners_sampled_every_5_m(radius, turn):
    for phase in np.linspace(0.0, 5.0, 4, endpoint=False):
        corners, _ = fitted(radius, turn, 5.0, phase)
        if radius == 50.0:  # a long curve: the windowed radius measures it (below)
            assert corners == [] or corners[0].radius == pytest.approx(radius, rel=0.25)
            continue
        (corner,) = corners
        assert corner.radius == pytest.approx(radius, rel=0.25)
        assert abs(np.degrees(abs(corner.turn)) - turn) < 10


@pytest.mark.parametrize("turn", [90.0, 180.0])
@pytest.mark.parametrize("radius", RADII)
def test_radius_of_corners_sampled_every_20_m(radius, turn):
    """A U-turn's radius is fixed by its straights whatever the spacing. A corner
    whose arc holds a point is fixed by that point. A corner shorter than the
    spacing with no point on its arc is only bounded (R ≤ R_max): the fit then takes
    R_max / 2, never above the truth by more than 25 % and never below half of it."""
    for phase in np.linspace(0.0, 20.0, 5, endpoint=False):
        corners, pinned = fitted(radius, turn, 20.0, phase)
        (corner,) = corners
        if turn == 180.0 or pinned:
            assert corner.radius == pytest.approx(radius, rel=0.25), (phase, corner)
        else:
            assert 0.5 * radius <= corner.radius <= 1.25 * radius, (phase, corner)


@pytest.mark.parametrize("spacing", [5.0, 20.0])
@pytest.mark.parametrize("turn", [90.0, 180.0])
@pytest.mark.parametrize("radius", RADII)
def test_terrain_radius_at_the_corner(tmp_path, radius, turn, spacing):
    """What the ride uses: the grid's least radius at the corner."""
    x, y, pinned = corner_path(radius, turn, spacing, phase=0.0)
    lat, lon = to_latlon(x, y)
    t = build_terrain(read_gpx(write_gpx(tmp_path / "c.gpx", lat, lon, np.full(x.size, 50.0))))
    least = float(t.curve_radius.min())
    if turn == 180.0 or pinned or spacing == 5.0:
        assert least == pytest.approx(radius, rel=0.25)
    else:
        assert 0.5 * radius <= least <= 1.25 * radius
    far = (t.distance < LEG - 60) | (t.distance > t.distance[-1] - LEG + 60)
    assert (t.curve_radius[far] > 1000).all()  # the straights are straight


def test_a_straight_with_gps_noise_has_no_corner():
    """GPS-like scatter (σ 1 m and 2 m, every 5 m) on a straight: no corner."""
    rng = np.random.default_rng(3)
    for sigma in (1.0, 2.0):
        x = np.arange(0.0, 2000.0, 5.0) + rng.normal(0, sigma, 400)
        y = rng.normal(0, sigma, 400)
        lat, lon = to_latlon(x, y)
        assert find_corners(lat, lon, cumulative_distance(lat, lon)) == []


@pytest.mark.parametrize("spacing", [5.0, 10.0])
@pytest.mark.parametrize("radius", [5.0, 7.7])
def test_hairpins_within_one_percent_and_printed_apart(radius, spacing):
    """A U-turn's two straights are 2R apart (AASHTO 2018, §3.3): its radius within
    1 %, printed rounded down to the metre, so 5 m and 7.7 m hairpins read apart."""
    from cardgen.render.format import radius as printed

    for phase in np.linspace(0.0, spacing, 4, endpoint=False):
        (corner,), _ = fitted(radius, 180.0, spacing, phase)
        assert corner.radius == pytest.approx(radius, rel=0.01)
        assert not corner.junction
        assert printed(corner.radius) == f"{int(radius)} m"


@pytest.mark.parametrize("spacing", [5.0, 10.0])
def test_a_6_m_corner_is_never_read_below_the_least_turn_radius(spacing):
    """A 90° corner of 6 m radius (the simple curve, AASHTO 2018 §3.3): at 5 m
    spacing points lie on its arc and pin it within 1 %; at 10 m some phases leave no
    point on the arc, and the radius is then only bounded: never below
    MIN_TURN_RADIUS (5 m), never above the truth by more than 5 %."""
    from cardgen.route.corners import MIN_TURN_RADIUS

    for phase in np.linspace(0.0, spacing, 4, endpoint=False):
        (corner,), pinned = fitted(6.0, 90.0, spacing, phase)
        if spacing == 5.0:
            assert corner.radius == pytest.approx(6.0, rel=0.01)
        assert MIN_TURN_RADIUS <= corner.radius <= 6.3
        assert corner.junction == (not pinned)


@pytest.mark.parametrize("spacing", [10.0, 25.0])
def test_a_turn_at_one_track_point_is_a_junction(spacing):
    """A right angle drawn as one track point (a junction, as route planners draw
    it): marked a junction, its radius at least MIN_TURN_RADIUS."""
    from cardgen.route.corners import MIN_TURN_RADIUS

    for phase in np.linspace(0.0, spacing, 4, endpoint=False):
        (corner,), pinned = fitted(0.01, 90.0, spacing, phase)
        assert corner.junction and not pinned
        assert corner.radius >= MIN_TURN_RADIUS
