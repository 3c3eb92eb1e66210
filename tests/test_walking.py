"""Walking stretches read as a rider would walk them: pieces close together are one
stretch, a patch too short to get off for is ridden (``plan/walking.py``), the same in
``plan.json``, ``route`` and the card (the printed card: ``test_climb_words.py``)."""

from __future__ import annotations

import numpy as np
import pytest
from gpxmaker import profile_gpx
from scipy.optimize import brentq

from cardgen.plan import walking
from cardgen.plan.walking import WALK_GAP, WALK_MIN, joined, stretches, walking_mask

STEP = 10.0
BALANCE = 5.5 / 3.6  # [m/s] the two-wheelers' balance speed of profiles/vehicles.py

# The generated climb: 1 km flat, then six pitches of 200 m at 11 % each followed by
# 150 m at 4 %, then 1 km flat. The steep part runs from 1,000 m to 2,950 m.
FLAT, UP, EASE, PITCHES = 1000.0, 200.0, 150.0, 6
STEEP, EASY = 0.11, 0.04
FIRST_FOOT = FLAT
LAST_TOP = FLAT + (PITCHES - 1) * (UP + EASE) + UP


def pitched_climb(path):
    d = np.arange(0.0, 2 * FLAT + PITCHES * (UP + EASE) + 1, STEP)
    x = d - FLAT
    inside = (x >= 0) & (x < PITCHES * (UP + EASE))
    grade = np.zeros_like(d)
    grade[inside] = np.where(x[inside] % (UP + EASE) < UP, STEEP, EASY)
    elevation = 100.0 + np.concatenate(([0.0], np.cumsum(grade[:-1] * STEP)))
    return profile_gpx(path, d, elevation, name="Pitched climb")


def _mask(speed, power=None):
    """walking_mask of a ride at these segment speeds [m/s] (pedalling throughout)."""
    speed = np.asarray(speed, dtype=float)
    power = np.full(speed.size, 100.0) if power is None else power
    return walking_mask(STEP, STEP / speed, power, np.zeros(speed.size, dtype=bool), BALANCE)


def test_joined_makes_close_runs_one_and_clears_short_ones():
    m = np.zeros(60, dtype=bool)
    m[5:8] = m[10:12] = True  # 2 segments apart: one run 5..12
    m[30] = True  # alone and short: cleared
    m[50:58] = True
    assert stretches(joined(m, gap=5, least=4)) == [(5, 12), (50, 58)]
    assert stretches(joined(m, gap=1, least=1)) == [(5, 8), (10, 12), (30, 31), (50, 58)]
    assert not joined(np.zeros(0, dtype=bool), 5, 4).size


def test_alternating_slow_pitches_are_one_walk_from_the_first_to_the_last():
    # 100 m at 3.6 km/h, then 100 m at 9 km/h, five times, between fast flats: the
    # ridden 100 m between slow pitches is shorter than WALK_GAP (common practice)
    slow, fast = np.full(10, 1.0), np.full(10, 2.5)
    speed = np.concatenate([np.full(50, 6.0), *([slow, fast] * 4), slow, np.full(50, 6.0)])
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(walking, "WALK_GAP", 0.0)
        mp.setattr(walking, "WALK_MIN", 0.0)
        assert len(stretches(_mask(speed))) == 5  # the pieces without the joining rule
    (run,) = stretches(_mask(speed))
    # the slow pitches span segments 50…140; the 50 m average blurs each end by at
    # most half its span
    assert abs(run[0] - 50) <= 3 and abs(run[1] - 140) <= 3


def test_pieces_a_long_ride_apart_stay_apart():
    gap = int(WALK_GAP / STEP) + 10
    speed = np.concatenate(
        [np.full(30, 6.0), np.full(20, 1.0), np.full(gap, 6.0), np.full(20, 1.0), np.full(30, 6.0)]
    )
    assert len(stretches(_mask(speed))) == 2


def test_a_short_slow_patch_or_a_single_point_is_ridden():
    for slow in (1, 2):  # a U-turn's one point, a 20 m patch at 1 m/s in 6 m/s riding
        speed = np.full(100, 6.0)
        speed[50 : 50 + slow] = 1.0
        assert not _mask(speed).any()
    speed = np.full(100, 6.0)
    speed[40 : 40 + int(WALK_MIN / STEP) + 5] = 1.0
    assert len(stretches(_mask(speed))) == 1


def test_coasting_is_never_walking():
    assert not _mask(np.full(50, 1.0), power=np.zeros(50)).any()


def steady_speed(power, grade, vehicle):
    """Speed [m/s] at which ``power`` at the pedals holds ``grade``: the steady power
    balance of Martin, Milliken, Cobb, McFadden & Coggan (1998), J. Appl. Biomech.
    14:276–291 (rolling, wheel bearings after Dahn et al. 1991, gravity, still air at
    1.225 kg/m³, ISO 2533), solved by brentq."""
    theta = np.arctan(grade)

    def surplus(v):
        wheel = (
            v * vehicle.mass * 9.80665 * (vehicle.crr * np.cos(theta) + np.sin(theta))
            + v * (0.091 + 0.0087 * v)
            + 0.5 * 1.225 * vehicle.cda * v**3
        )
        return power * vehicle.efficiency - wheel

    return brentq(surplus, 1e-6, 30.0)


def test_the_pitched_climb_is_one_walk_for_a_weak_tandem(cli, tmp_path):
    """A tandem at CP 141 W: at CP its steady speed is below the balance speed on the
    11 % pitches and above it on the 4 % ones (checked here by the power balance), so
    the plan dips below balance speed six times; the rider reads one walk from the
    first pitch's foot to the last one's top."""
    from cardgen.profiles.vehicles import find_vehicle

    tandem = find_vehicle("tandem")
    assert steady_speed(141.0, STEEP, tandem) < BALANCE < steady_speed(141.0, EASY, tandem)
    gpx = pitched_climb(tmp_path / "pitched.gpx")
    code, data, err = cli("route", str(gpx), "--vehicle", "tandem", "--cp", "141", "--json", parse_json=True)
    assert code == 0, err
    (climb,) = data["climbs"]
    (walk,) = [w for w in climb["warnings"] if w["code"] == "walk"]
    assert not [n for n in data["notes"] if n["code"] == "walk"]
    length = float(walk["text"].split("for about ")[1].split(" m")[0].replace(",", ""))
    start = walk["at_km"] * 1000
    # within the 250 m smoothing's reach of the drawn ends (route/terrain.py), and the
    # printed length rounds to 10 m
    assert abs(start - FIRST_FOOT) <= 60
    assert abs(start + length - LAST_TOP) <= 100
    assert "walk" in climb["rider_difficulty"]
