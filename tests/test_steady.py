"""Power for speed and speed for power: references, round trips, edge cases."""

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from cardgen.physics.forces import steady_breakdown
from cardgen.physics.steady import power_for_speed, speed_for_power

KMH = 1 / 3.6
# Figures of the trade: common practice, no published source. An upright bike and
# rider: m = 100 kg, Crr = 0.008, CdA 0.63 m² (inside the quoted 0.6–0.65), ρ = 1.2,
# no drivetrain loss, no bearing term. Tolerance ±10 %.
UPRIGHT = dict(mass=100.0, crr=0.008, cda=0.63, efficiency=1.0, air_density=1.2, bearings=False)


@pytest.mark.parametrize("speed_kmh, watts", [(10, 30), (20, 110), (30, 285)])
def test_flat_power_figures_common_practice(speed_kmh, watts):
    assert power_for_speed(speed_kmh * KMH, **UPRIGHT) == pytest.approx(watts, rel=0.10)


def test_flat_power_at_40_kmh_is_over_600_w_common_practice():
    assert 600 < power_for_speed(40 * KMH, **UPRIGHT) < 660


def test_rolling_share_falls_with_speed_common_practice():
    slow = steady_breakdown(10 * KMH, **UPRIGHT)
    fast = steady_breakdown(40 * KMH, **UPRIGHT)
    assert slow.rolling / slow.total > 0.70
    assert fast.rolling / fast.total == pytest.approx(0.14, abs=0.014)


def test_wind_figures_common_practice():
    into = power_for_speed(30 * KMH, headwind=20 * KMH, **UPRIGHT)
    behind = power_for_speed(30 * KMH, headwind=-20 * KMH, **UPRIGHT)
    assert into == pytest.approx(660, rel=0.10)
    assert behind == pytest.approx(90, rel=0.10)
    assert speed_for_power(100.0, headwind=20 * KMH, **UPRIGHT) / KMH == pytest.approx(10, rel=0.10)


def test_speed_for_power_martin_1998():
    # Inverse of the Martin et al. (1998) check value: 195.62 W → 10 m/s (see test_forces).
    martin = dict(mass=80.0, crr=0.0032, cda=0.2734, efficiency=0.976, air_density=1.2)
    assert speed_for_power(195.6199, **martin) == pytest.approx(10.0, rel=1e-5)


def test_vectorised_over_arrays_and_keeps_shape():
    power = np.linspace(0, 400, 12).reshape(3, 4)
    grade = np.linspace(-0.1, 0.1, 4)
    v = speed_for_power(power, grade=grade, **UPRIGHT)
    assert v.shape == (3, 4)
    back = power_for_speed(v, grade=grade, **UPRIGHT)
    moving = power > 0
    np.testing.assert_allclose(back[moving], power[moving], rtol=1e-8)


def test_coasting_downhill_reaches_terminal_speed():
    v = speed_for_power(0.0, grade=-0.08, **UPRIGHT)
    assert v > 10
    # at the terminal speed the forces balance: no power is needed or given
    assert power_for_speed(v, grade=-0.08, **UPRIGHT) == pytest.approx(0.0, abs=1e-6)


def test_zero_power_uphill_or_flat_stops():
    assert speed_for_power(0.0, grade=0.02, **UPRIGHT) == 0.0
    assert speed_for_power(0.0, **UPRIGHT) == 0.0


def test_braking_downhill_gives_the_stable_speed():
    v = speed_for_power(-150.0, grade=-0.10, **UPRIGHT)
    assert power_for_speed(v, grade=-0.10, **UPRIGHT) == pytest.approx(-150.0, abs=1e-6)
    # stable: a little faster needs less braking (more power), a little slower more
    assert power_for_speed(v * 1.01, grade=-0.10, **UPRIGHT) > -150.0
    # braking harder than gravity can feed stops the vehicle
    assert speed_for_power(-5000.0, grade=-0.10, **UPRIGHT) == 0.0


def test_invalid_parameters_give_nan():
    assert np.isnan(speed_for_power(100.0, mass=-5.0, crr=0.005, cda=0.4))
    assert np.isnan(speed_for_power(100.0, mass=80.0, crr=0.005, cda=0.0))
    assert np.isnan(speed_for_power(np.nan, **UPRIGHT))
    assert np.isnan(power_for_speed(-1.0, **UPRIGHT))
    assert np.isnan(power_for_speed(5.0, mass=80.0, crr=0.005, cda=0.4, efficiency=1.5))


def test_strong_tailwind_pushes_a_coasting_rider():
    v = speed_for_power(0.0, headwind=-10.0, **UPRIGHT)
    assert 0 < v < 10.0
    assert power_for_speed(v, headwind=-10.0, **UPRIGHT) == pytest.approx(0.0, abs=1e-6)


def _stable(v, grade, wind, params):
    """d(power)/d(speed) > 0: a small speed-up meets more resistance."""
    dv = 1e-4
    return power_for_speed(v + dv, grade=grade, headwind=wind, **params) > power_for_speed(
        v, grade=grade, headwind=wind, **params
    )


@given(
    v=st.floats(0.5, 25.0),
    grade=st.floats(-0.15, 0.15),
    wind=st.floats(-15.0, 15.0),
    mass=st.floats(40.0, 250.0),
    cda=st.floats(0.2, 0.8),
)
def test_round_trip_speed_power_speed(v, grade, wind, mass, cda):
    params = dict(mass=mass, crr=0.005, cda=cda, efficiency=0.97, air_density=1.2)
    power = power_for_speed(v, grade=grade, headwind=wind, **params)
    back = speed_for_power(power, grade=grade, headwind=wind, **params)
    if _stable(v, grade, wind, params):
        assert back == pytest.approx(v, rel=1e-7, abs=1e-7)
    else:
        # On the unstable branch the solver returns the stable speed with the same power.
        assert back >= v
        assert power_for_speed(back, grade=grade, headwind=wind, **params) == pytest.approx(
            power, rel=1e-6, abs=1e-6
        )


def test_a_first_guess_gives_the_same_speed_as_a_root_finder():
    """``guess`` only moves where the iteration starts: from guesses too low, too high,
    zero, NaN and near the answer, the speed is scipy's brentq root of v·F(v) = P (an
    independent root finder) on climbs, the flat and descents, within rtol."""
    from scipy.optimize import brentq

    grades = np.array([-0.08, -0.03, 0.0, 0.02, 0.06, 0.12])
    powers = np.array([[5.0], [60.0], [180.0], [400.0]])
    cold = speed_for_power(powers, grade=grades, **UPRIGHT)
    for guess in (0.3 * cold, 3.0 * cold, np.zeros_like(cold), np.full_like(cold, np.nan), 1.01 * cold):
        warm = speed_for_power(powers, grade=grades, rtol=1e-10, guess=guess, **UPRIGHT)
        for (i, j), got in np.ndenumerate(warm):

            def excess(v, i=i, j=j):
                return float(power_for_speed(v, grade=grades[j], **UPRIGHT)) - powers[i, 0]

            assert got == pytest.approx(brentq(excess, 1e-6, 60.0, xtol=1e-12), rel=1e-9)
