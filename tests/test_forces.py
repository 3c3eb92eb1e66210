"""The power-balance terms against Martin et al. (1998) and hand derivations."""

import numpy as np
import pytest

from cardgen.physics.forces import (
    G0,
    aero_power,
    bearing_power,
    gravity_power,
    pedal_power,
    rolling_power,
    steady_breakdown,
    wheel_power,
)

# Martin, Milliken, Cobb, McFadden & Coggan (1998), J. Appl. Biomech. 14:276–291.
# Parameters as reported: CdA 0.269 m² + spoke drag area F_W 0.0044 m², Crr 0.0032,
# E_C 0.976, and the Dahn et al. bearing term. The parameter values are taken from
# secondary sources (Sports Engineering 2021, s12283-021-00345-2, Table 1), not read in
# the paper itself. Rider + bike 80 kg, ρ = 1.2, flat, still air.
MARTIN = dict(mass=80.0, crr=0.0032, cda=0.269 + 0.0044, efficiency=0.976, air_density=1.2)

# Hand derivation, term by term (written out here, not produced by the code):
#   aero     = ½·1.2·0.2734·v³
#   rolling  = v·0.0032·80·9.80665
#   bearings = v·(0.091 + 0.0087·v)
#   total    = (aero + rolling + bearings) / 0.976
HAND = [
    # v, aero, rolling, bearings, total at the pedals
    (8.0, 83.98848, 20.084019, 1.28480, 107.9481),
    (10.0, 164.04000, 25.105024, 1.78000, 195.6199),
    (12.0, 283.46112, 30.126029, 2.34480, 323.7008),
]


@pytest.mark.parametrize("v, aero, rolling, bearings, total", HAND)
def test_martin_1998_terms_by_hand(v, aero, rolling, bearings, total):
    parts = steady_breakdown(v, **MARTIN)
    assert parts.aero == pytest.approx(aero, rel=1e-6)
    assert parts.rolling == pytest.approx(rolling, rel=1e-6)
    assert parts.bearings == pytest.approx(bearings, rel=1e-6)
    assert parts.gravity == 0.0
    assert parts.total == pytest.approx(total, rel=1e-5)
    assert parts.drivetrain == pytest.approx(total - aero - rolling - bearings, abs=1e-3)


@pytest.mark.parametrize("v, expected", [(8.0, 107.95), (10.0, 195.62), (12.0, 323.70)])
def test_martin_1998_check_values(v, expected):
    # docs/sources.md section 1, values computed from the Martin equation [C].
    assert steady_breakdown(v, **MARTIN).total == pytest.approx(expected, abs=0.01)


def test_gravity_uses_exact_trigonometry():
    # On a 100 % grade the road is at 45°: sin = √½, not the small-angle 1.0.
    assert gravity_power(1.0, 100.0, 1.0) == pytest.approx(100 * G0 / np.sqrt(2), rel=1e-12)
    assert rolling_power(1.0, 100.0, 0.01, 1.0) == pytest.approx(0.01 * 100 * G0 / np.sqrt(2), rel=1e-12)
    assert gravity_power(2.0, 80.0, -0.1) < 0


def test_aero_signed_air_speed():
    # A tailwind faster than the rider pushes: negative drag power.
    assert aero_power(5.0, 0.4, 1.2, headwind=-10.0) == pytest.approx(-0.5 * 1.2 * 0.4 * 25 * 5)
    assert aero_power(5.0, 0.4, 1.2, headwind=-5.0) == 0.0
    assert aero_power(5.0, 0.4, 1.2, headwind=5.0) == pytest.approx(0.5 * 1.2 * 0.4 * 100 * 5)


def test_terms_broadcast_arrays_and_propagate_nan():
    v = np.array([0.0, 5.0, np.nan])
    assert rolling_power(v, 80.0, 0.004).shape == (3,)
    assert np.isnan(aero_power(v, 0.3, 1.2)[2])
    assert bearing_power(0.0) == 0.0


def test_drivetrain_only_on_positive_power():
    assert pedal_power(97.6, 0.976) == pytest.approx(100.0)
    assert pedal_power(-50.0, 0.9) == -50.0
    assert wheel_power(pedal_power(123.0, 0.95), 0.95) == pytest.approx(123.0)


def test_energy_bookkeeping_climb_then_descend_returns_potential_energy():
    """With no losses, gravity takes m·g·Δh up the hill and gives it back down."""
    rng = np.random.default_rng(7)
    mass = 90.0
    run = rng.uniform(5.0, 40.0, 400)  # horizontal step lengths [m]
    grade = rng.uniform(0.0, 0.25, 400)  # up
    rise = run * grade
    slope_length = np.hypot(run, rise)
    up_speed = rng.uniform(1.0, 6.0, 400)
    down_speed = rng.uniform(5.0, 20.0, 400)
    work_up = np.sum(gravity_power(up_speed, mass, grade) * slope_length / up_speed)
    work_down = np.sum(gravity_power(down_speed, mass, -grade[::-1]) * slope_length[::-1] / down_speed)
    potential = mass * G0 * rise.sum()
    assert work_up == pytest.approx(potential, rel=1e-9)
    assert work_up + work_down == pytest.approx(0.0, abs=1e-9 * potential)
