"""The ride simulation and the W′ balance."""

import math

import numpy as np
import pytest

from cardgen.physics.effort import w_prime_balance
from cardgen.physics.forces import G0, Air, Resistance
from cardgen.physics.ride import clamp_affine_scan, simulate, speed_limit_profile
from cardgen.physics.steady import speed_for_power

ROAD = dict(mass=85.0, crr=0.005, cda=0.4, efficiency=0.976, wheel_inertia_mass=1.45)


def _ride(grade, power, cap=None, step=10.0, **kw):
    grade = np.asarray(grade, dtype=float)
    n = grade.size
    d = np.arange(n + 1) * step
    params = {**ROAD, **kw}
    headwind, rho = params.pop("headwind", 0.0), params.pop("air_density", 1.2)
    extra = {k: params.pop(k) for k in ("start_speed", "passes", "motor", "warm") if k in params}
    return simulate(
        step=step,
        grade=grade,
        air=Air(headwind, rho),
        resistance=Resistance(**params),
        rider_power=np.broadcast_to(power, (n,)),
        speed_cap=np.full(n + 1, np.inf) if cap is None else cap,
        distance=d,
        deceleration=2.45,
        **extra,
    )


@pytest.mark.parametrize("n", [1, 2, 3, 17, 777, 1024])
def test_scan_equals_the_plain_loop(n):
    rng = np.random.default_rng(n)
    a, b = rng.uniform(0, 1, n), rng.normal(0, 1, n)
    lo = rng.normal(-1, 1, n)
    hi = lo + rng.uniform(0, 3, n)
    x = [0.3]
    for i in range(n):
        x.append(min(hi[i], max(lo[i], a[i] * x[-1] + b[i])))
    np.testing.assert_allclose(clamp_affine_scan(a, b, lo, hi, 0.3), x, atol=1e-12)


@pytest.mark.parametrize("grade", [0.0, 0.03, 0.08, 0.12, -0.02, -0.06])
def test_long_constant_grade_converges_to_steady_speed(grade):
    ride = _ride(np.full(2000, grade), 180.0, start_speed=3.0)
    steady = speed_for_power(
        180.0, grade=grade, air_density=1.2, mass=85.0, crr=0.005, cda=0.4, efficiency=0.976
    )
    assert ride.speed[-1] == pytest.approx(steady, rel=0.005)


def test_closed_loop_without_losses_returns_to_start_speed():
    """No drag, no rolling, no power: only gravity and kinetic energy trade."""
    n = 3000
    e = 40 * np.sin(np.linspace(0, 4 * np.pi, n + 1)) + 15 * np.sin(np.linspace(0, 14 * np.pi, n + 1))
    grade = np.diff(e) / 10.0
    ride = _ride(grade, 0.0, crr=0.0, cda=0.0, efficiency=1.0, bearings=False, start_speed=35.0)
    assert ride.speed[-1] == pytest.approx(35.0, rel=1e-9)
    # and at every node kinetic (with the wheels' rotation) plus potential energy is
    # the same: ½·(m + I/r²)·v² + m·g·h
    energy = 0.5 * (85.0 + 1.45) * ride.speed**2 + 85.0 * G0 * e
    np.testing.assert_allclose(energy, energy[0], rtol=1e-9)


def test_work_equals_the_integral_of_the_split_terms():
    rng = np.random.default_rng(3)
    grade = np.repeat(rng.uniform(-0.08, 0.1, 60), 25)
    power = np.where(grade > 0.02, 260.0, np.where(grade < -0.03, 0.0, 170.0))
    cap = np.full(grade.size + 1, 11.0)
    ride = _ride(grade, power, cap=cap, headwind=3.0)
    work = np.sum(ride.rider_power * ride.time)
    terms = (
        ride.rolling
        + ride.bearings
        + ride.aero
        + ride.gravity
        + ride.kinetic
        + ride.drivetrain
        + ride.braking
        + ride.residual
    )
    assert np.sum(terms * ride.time) == pytest.approx(work, rel=1e-9)
    # the linearisation's leftover is tiny next to the work done (this profile has
    # abrupt grade steps, the worst case; measured 0.08 % with 5 passes)
    assert np.sum(np.abs(ride.residual) * ride.time) < 2e-3 * work
    assert (ride.braking >= 0).all()
    assert ride.braking[ride.limited].sum() > 0 and ride.braking[~ride.limited].sum() == 0


def _rk4_reference(grade, power, step, wind, start):
    """Fine-step Runge–Kutta in distance of d(½·m_e·v²)/ds = P_w/v − F(v): the
    reference integration the exponential scan is compared against."""
    m_e = 86.45
    u = start**2
    out = [start]
    sub = 100
    for i in range(grade.size):
        c = 1 / math.sqrt(1 + grade[i] ** 2)
        s = grade[i] * c
        h = step / c / sub  # along the slope
        pw = power[i] * 0.976 if power[i] > 0 else power[i]

        def rhs(u, c=c, s=s, pw=pw):
            v = math.sqrt(max(u, 1e-12))
            air = v + wind
            force = 0.5 * 1.2 * 0.4 * air * abs(air) + 85 * G0 * (0.005 * c + s) + 0.091 + 0.0087 * v
            return 2 / m_e * (pw / v - force)

        for _ in range(sub):
            k1 = rhs(u)
            k2 = rhs(u + h / 2 * k1)
            k3 = rhs(u + h / 2 * k2)
            k4 = rhs(u + h * k3)
            u = max(u + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4), 0.0)
        out.append(math.sqrt(u))
    return np.array(out)


def test_speed_profile_matches_a_fine_runge_kutta_integration():
    d = np.arange(0, 6001, 10.0)
    e = np.interp(d, [0, 1000, 2000, 2500, 3500, 4500, 6000], [0, 0, 80, 80, -20, -20, 30])
    grade = np.diff(e) / 10.0
    power = np.where(grade > 0.02, 250.0, np.where(grade < -0.02, 0.0, 150.0))
    ride = _ride(grade, power, headwind=2.0, start_speed=5.0)
    reference = _rk4_reference(grade, power, 10.0, 2.0, 5.0)
    np.testing.assert_allclose(ride.speed, reference, rtol=0.01)
    ref_time = np.sum(10.0 * np.sqrt(1 + grade**2) / (0.5 * (reference[1:] + reference[:-1])))
    assert ride.elapsed[-1] == pytest.approx(ref_time, rel=0.005)


def test_speed_limits_and_braking():
    n = 400
    grade = np.full(n, -0.08)
    cap = np.full(n + 1, 16.0)
    cap[200] = 5.0  # a hairpin
    ride = _ride(grade, 0.0, cap=cap)
    assert (ride.speed <= cap + 1e-9).all()
    assert ride.speed[200] <= 5.0 + 1e-9
    # braking into the hairpin at no more than the set deceleration: v² falls ≤ 2·b·Δs
    drop = -np.diff(ride.speed**2)
    assert (drop <= 2 * 2.45 * 10.0 * (1 + 1e-9)).all()
    assert ride.braking[190:200].min() > 0


def test_speed_limit_profile_envelope():
    d = np.arange(0, 101, 10.0)
    cap = np.full(11, np.inf)
    cap[10] = 0.0
    limit = speed_limit_profile(d, cap, 2.0)
    np.testing.assert_allclose(limit, np.sqrt(2 * 2.0 * (100 - d)))


# The differential W′ balance: Skiba, Fulford, Clarke, Vanhatalo & Jones (2015), Eur. J.
# Appl. Physiol. 115:703 (from memory); the critical-power model of Monod & Scherrer
# (1965), Ergonomics 8:329: at P > CP, W′ lasts t = W′/(P − CP).
def test_w_prime_never_depletes_below_cp():
    bal = w_prime_balance(np.full(500, 240.0), np.full(500, 10.0), cp=250.0, w_prime=20000.0)
    np.testing.assert_allclose(bal, 20000.0)


def test_w_prime_runs_out_after_w_prime_over_the_power_above_cp():
    cp, w_prime = 250.0, 20000.0
    seconds = w_prime / 50.0  # Monod & Scherrer: 400 s at CP + 50 W
    bal = w_prime_balance(np.full(400, cp + 50.0), np.full(400, seconds / 400), cp=cp, w_prime=w_prime)
    assert bal[-1] == pytest.approx(0.0, abs=1e-6)
    assert bal[199] == pytest.approx(w_prime / 2)  # linear: half gone at half time


def test_w_prime_recovers_only_below_cp_exponentially():
    cp, w_prime = 250.0, 20000.0
    work = np.concatenate((np.full(60, cp + 100.0), np.full(600, 150.0), np.full(100, cp)))
    bal = w_prime_balance(work, np.ones(work.size), cp=cp, w_prime=w_prime)
    spent = 60 * 100.0
    assert bal[59] == pytest.approx(w_prime - spent)  # depletion is linear, nothing back above CP
    # dW/dt = (W′ − W)(CP − P)/W′ solved over 600 s at D_CP = 100 W
    assert bal[659] == pytest.approx(w_prime - spent * math.exp(-100.0 * 600 / w_prime), rel=1e-9)
    assert bal[-1] == pytest.approx(bal[659])  # at exactly CP: neither spent nor recovered


def test_a_warm_start_from_a_nearby_ride_is_the_same_ride_in_fewer_passes():
    """A re-ride at a few per cent more power, started from the first ride's speeds,
    agrees with the same ride started cold to the simulation's tolerance (1e-6 of
    each node's speed); it keeps the rolling start (the first segment's steady speed)
    and takes fewer passes; and it still meets the fine Runge–Kutta integration of
    the test above (the reference outside the model)."""
    d = np.arange(0, 6001, 10.0)
    e = np.interp(d, [0, 1000, 2000, 2500, 3500, 4500, 6000], [0, 0, 80, 80, -20, -20, 30])
    grade = np.diff(e) / 10.0
    power = np.where(grade > 0.02, 250.0, np.where(grade < -0.02, 0.0, 150.0))
    first = _ride(grade, power, headwind=2.0)
    cold = _ride(grade, 1.03 * power, headwind=2.0)
    warm = _ride(grade, 1.03 * power, headwind=2.0, warm=first.speed)
    np.testing.assert_allclose(warm.speed, cold.speed, rtol=1e-5)
    assert warm.elapsed[-1] == pytest.approx(cold.elapsed[-1], rel=1e-6)
    assert warm.speed[0] == cold.speed[0]
    assert warm.passes < cold.passes
    reference = _rk4_reference(grade, 1.03 * power, 10.0, 2.0, float(cold.speed[0]))
    np.testing.assert_allclose(warm.speed, reference, rtol=0.01)
