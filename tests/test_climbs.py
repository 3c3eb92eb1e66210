"""Climb and descent detection on synthetic profiles; the FIETS index."""

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.io.gpx import read_gpx
from cardgen.route.climbs import difficulty_band, fiets_index, find_climbs, find_descents
from cardgen.route.terrain import build_terrain


# FIETS index as published by the Dutch magazine Fiets (formula via secondary sources);
# values computed in docs/sources.md §5 [C].
@pytest.mark.parametrize(
    "gain, length, top, score",
    [
        (100.0, 1000.0, 200.0, 1.00),
        (160.0, 2000.0, 300.0, 1.28),
        (500.0, 10000.0, 600.0, 2.50),
        (1071.0, 13800.0, 1850.0, 9.16),
    ],
)
def test_fiets_index(gain, length, top, score):
    assert fiets_index(gain, length, top) == pytest.approx(score, abs=0.005)


def test_fiets_index_arrays_and_invalid():
    np.testing.assert_allclose(fiets_index([100, 160], [1000, 2000], [200, 300]), [1.0, 1.28])
    assert np.isnan(fiets_index(10, 0, 100))


def test_bands_rise_with_the_score():
    order = ["easy", "moderate", "hard", "very hard", "extreme"]
    assert [difficulty_band(s) for s in (0.1, 1.0, 2.0, 5.0, 9.0)] == order
    scores = np.sort(np.random.default_rng(1).uniform(0, 12, 500))
    ranks = [order.index(difficulty_band(s)) for s in scores]
    assert ranks == sorted(ranks)


def _terrain(tmp_path, knots_d, knots_e, name="p.gpx", noise=0.0, seed=0):
    d = np.arange(0.0, knots_d[-1] + 1, 10.0)
    e = np.interp(d, knots_d, knots_e) + np.random.default_rng(seed).normal(0, noise, d.size)
    return build_terrain(read_gpx(profile_gpx(tmp_path / name, d, e)))


def test_ramp_is_one_climb_with_its_numbers(tmp_path):
    t = _terrain(tmp_path, [0, 1000, 3000, 4000], [100, 100, 220, 220])
    (climb,) = find_climbs(t)
    assert climb.start_distance == pytest.approx(1000, abs=30)
    assert climb.end_distance == pytest.approx(3000, abs=30)
    assert climb.height == pytest.approx(120, rel=0.02)
    assert climb.avg_grade == pytest.approx(0.06, rel=0.02)
    assert climb.steepest_grade == pytest.approx(0.06, rel=0.05)
    assert find_descents(t) == []


def test_flat_noise_makes_no_climb(tmp_path):
    t = _terrain(tmp_path, [0, 10000], [100, 100], noise=3.0, seed=4)
    assert find_climbs(t) == [] and find_descents(t) == []


def test_single_point_spike_makes_no_climb(tmp_path):
    d = np.arange(0.0, 4001.0, 10.0)
    e = np.full(d.size, 100.0)
    e[200] += 40.0
    t = build_terrain(read_gpx(profile_gpx(tmp_path / "s.gpx", d, e)))
    assert find_climbs(t) == [] and find_descents(t) == []


def test_dip_inside_a_climb_is_merged(tmp_path):
    # 1 km at 6 %, 200 m at −2 %, 1 km at 6 %
    t = _terrain(tmp_path, [0, 500, 1500, 1700, 2700, 3500], [100, 100, 160, 156, 216, 216])
    (climb,) = find_climbs(t)
    assert climb.start_distance == pytest.approx(500, abs=30)
    assert climb.end_distance == pytest.approx(2700, abs=30)


def test_small_bump_is_not_a_climb(tmp_path):
    t = _terrain(tmp_path, [0, 1000, 1150, 1300, 3000], [100, 100, 110, 100, 100])
    assert find_climbs(t) == []


def test_two_climbs_apart_stay_apart(tmp_path):
    t = _terrain(tmp_path, [0, 500, 1500, 3500, 4500, 5000], [0, 0, 50, 50, 110, 110])
    climbs = find_climbs(t)
    assert [round(c.height, -1) for c in climbs] == [50, 60]


def test_descent_is_the_mirror(tmp_path):
    t = _terrain(tmp_path, [0, 500, 2500, 3000], [300, 300, 140, 140])
    (descent,) = find_descents(t)
    assert descent.height == pytest.approx(160, rel=0.02)
    assert descent.avg_grade == pytest.approx(-0.08, rel=0.02)
    assert descent.steepest_grade < -0.075
    assert not hasattr(descent, "score")  # a descent has no climb difficulty


def test_thresholds_are_keywords(tmp_path):
    t = _terrain(tmp_path, [0, 500, 1500, 2000], [0, 0, 25, 25])  # 2.5 %
    assert find_climbs(t) == []
    assert len(find_climbs(t, min_avg_grade=0.02)) == 1
    assert find_climbs(t, min_avg_grade=0.02, min_gain=30) == []


def _pitch(tmp_path, knots_d, knots_e, noise=0.0, seed=0, spikes=False):
    d = np.arange(0.0, knots_d[-1] + 1, 10.0)
    e = np.interp(d, knots_d, knots_e) + np.random.default_rng(seed).normal(0, noise, d.size)
    if spikes:
        e[::97] += 40.0  # isolated GPS spikes
    (climb,) = find_climbs(build_terrain(read_gpx(profile_gpx(tmp_path / f"p{seed}.gpx", d, e))))
    return climb


@pytest.mark.parametrize("seed", range(4))
def test_steepest_pitch_is_not_inflated_by_noise(tmp_path, seed):
    """A constant 8 % climb with white elevation noise σ 2.5 m at 10 m spacing and +40 m
    spikes reads within 1.5 points of 8 %, over a stretch no longer than the 3 km climb
    (as cardgen measures it: its distances agree with geodesics within 0.6 %,
    test_terrain.py, and the generator lays metres out on a plane)."""
    climb = _pitch(tmp_path, [0, 1000, 4000, 5000], [0, 0, 240, 240], noise=2.5, seed=seed, spikes=True)
    assert abs(climb.steepest_grade - 0.08) <= 0.015
    assert 100 < climb.pitch_length <= 3000 * 1.006


@pytest.mark.parametrize(
    "knots",
    [
        ([0, 1000, 3000, 4000], [0, 0, 120, 120]),
        ([0, 2000, 3000], [0, 120, 120]),
        ([0, 1000, 3000], [0, 0, 120]),
    ],
)
def test_steepest_pitch_of_a_clean_climb_at_the_route_ends_too(tmp_path, knots):
    climb = _pitch(tmp_path, *knots)  # a 2 km climb at 6 %, also starting or ending the route
    assert abs(climb.steepest_grade - 0.06) <= 0.003
    assert climb.pitch_length == pytest.approx(2000, abs=5)  # printed "2000 m" (to 10 m)
