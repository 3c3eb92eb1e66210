"""The pacing plan against an optimum worked out here, independently of the planner.

The reference: steady speeds from the power balance of Martin et al. (1998) solved
with scipy's brentq; a dynamic programme of its own over 100 m stages and the W′
balance (Skiba et al. 2015), the mean power held by bisection on a price of time;
every plan (the planner's, the reference's, constant power) ridden again with
scipy's solve_ivp on the equation of motion with inertia, and its W′ balance
integrated alongside. Everything is compared at the planner's own mean power as
ridden (the comparison of Swain 1997 and Atkinson, Peacock & Passfield 2007).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from cardgen.plan.pacing import Course, ceiling, pace
from cardgen.profiles.vehicles import builtin_vehicles

pytestmark = pytest.mark.slow

G = 9.80665
RHO = 1.2
STEP = 10.0
STAGE = 100.0  # [m] the reference programme's stages


# --- routes of our own (distance, elevation [m] at 10 m nodes; headwind [m/s] per segment)


def _hilly_loop():
    """A 30 km loop of rolling hills, 4–8 % at their steepest, back to its start."""
    s = np.arange(0.0, 30000.0 + STEP, STEP)
    z = 60 * np.sin(2 * np.pi * s / 6000) + 25 * np.sin(2 * np.pi * s / 2500 + 1.0)
    z -= np.linspace(0, z[-1] - z[0], s.size)
    return s, z, np.zeros(s.size - 1)


def _ramps():
    """20 km of 300 m ramps at ±9 % between 500 m flats (common practice course)."""
    s = np.arange(0.0, 20000.0 + STEP, STEP)
    phase = np.mod(s, 1600.0)
    slope = np.select([phase < 500, phase < 800, phase < 1300], [0.0, 0.09, 0.0], -0.09)
    z = np.concatenate(([0.0], np.cumsum(slope[:-1] * STEP)))
    return s, z, np.zeros(s.size - 1)


def _long_climb():
    """3 km flat, 8 km at 6 %, 3 km flat."""
    s = np.arange(0.0, 14000.0 + STEP, STEP)
    z = np.interp(s, [0, 3000, 11000, 14000], [0, 0, 480, 480])
    return s, z, np.zeros(s.size - 1)


def _windy_out_and_back():
    """20 km out into a 6 m/s headwind and 20 km back with it, on the flat."""
    s = np.arange(0.0, 40000.0 + STEP, STEP)
    wind = np.where(s[:-1] < 20000, 6.0, -6.0)
    return s, np.zeros(s.size), wind


ROUTES = {
    "hilly-loop": (_hilly_loop, True),
    "ramps": (_ramps, True),
    "long-climb": (_long_climb, True),
    "windy-out-and-back": (_windy_out_and_back, False),
}
# CP 250 W road and 110 W handcycle as in the table; W′ = 70 s × CP
RIDERS = {
    "road": ("road-hoods", 250.0),
    "upright": ("city-upright", 160.0),
    "handcycle": ("handcycle", 110.0),
}
MEAN_SHARE = 0.72  # of CP: an all-day effort


# --- the independent model


class Model:
    """Martin et al. (1998): P·E = ½ρCdA(v + w)²v + m·g·(Crr·cos θ + sin θ)·v + bearings
    (91 + 8.7v)·10⁻³·v (Dahn et al. 1991) + m_e·v·dv/dt."""

    def __init__(self, vehicle):
        r = vehicle.resistance
        self.m, self.crr, self.cda, self.eff = r.mass, r.crr, r.cda, r.efficiency
        self.m_e = r.mass + r.wheel_inertia_mass
        self.bearings = r.bearings
        self.cap = vehicle.max_descent_speed

    def force(self, v, grade, wind):
        theta = math.atan(grade)
        air = 0.5 * RHO * self.cda * (v + wind) * abs(v + wind)
        bearing = (0.091 + 0.0087 * v) if self.bearings else 0.0
        return air + self.m * G * (self.crr * math.cos(theta) + math.sin(theta)) + bearing

    def wheel(self, power):
        return power * self.eff if power > 0 else power

    def steady_speed(self, power, grade, wind):
        wheel = self.wheel(power)

        def surplus(v):
            return wheel - self.force(v, grade, wind) * v

        if surplus(0.05) <= 0:  # cannot move (or only below 0.05 m/s)
            return 0.05
        return min(brentq(surplus, 0.05, 60.0, xtol=1e-9), self.cap)

    def ride(self, s, grade, wind, power, cp, w_prime):
        """solve_ivp along the distance: y = (v, t, W′bal); returns time, mean power,
        lowest W′."""
        n = grade.size

        def rhs(x, y):
            v, _, w = y
            i = min(int(x / STEP), n - 1)
            v = max(v, 0.05)
            p = power[i]
            dv = (self.wheel(p) / v - self.force(v, grade[i], wind[i])) / (self.m_e * v)
            if v >= self.cap and dv > 0:
                dv = 0.0  # held at the vehicle's limit by the brakes
            dw = -(p - cp) / v if p >= cp else (w_prime - w) * (cp - p) / w_prime / v
            return [dv, 1.0 / v, dw]

        v0 = self.steady_speed(power[0], grade[0], wind[0])
        sol = solve_ivp(rhs, (s[0], s[-1]), [v0, 0.0, w_prime], max_step=STEP, rtol=1e-6, atol=1e-6)
        assert sol.success
        v, t, w = sol.y
        x = sol.t
        # mean power weighted by time: the integral of P dt over the route
        idx = np.minimum((x[:-1] / STEP).astype(int), n - 1)
        dt = np.diff(t)
        mean = float(np.sum(power[idx] * dt) / t[-1])
        return float(t[-1]), mean, float(np.min(w))


def reference_optimum(model, s, grade, wind, cp, w_prime, top, mean_power):
    """The reference programme: 100 m stages (each at its own mean grade and wind),
    81 power levels from 0 to ``top``, 161 W′ levels; the mean held by bisection on κ.
    Returns power per 10 m segment."""
    per = int(STAGE / STEP)
    stages = grade.size // per
    g = grade[: stages * per].reshape(stages, per).mean(axis=1)
    w = wind[: stages * per].reshape(stages, per).mean(axis=1)
    levels = np.linspace(0.0, top, 81)
    length = STAGE * np.sqrt(1 + g**2)
    speed = np.array([[model.steady_speed(p, gi, wi) for p in levels] for gi, wi in zip(g, w, strict=True)])
    t = length[:, None] / speed  # (stages, levels)
    grid = np.linspace(0.0, w_prime, 161)
    nxt = np.where(
        levels[None, None, :] >= cp,
        grid[None, :, None] - (levels - cp)[None, None, :] * t[:, None, :],
        w_prime
        - (w_prime - grid[None, :, None]) * np.exp(-np.maximum(cp - levels, 0) * t / w_prime)[:, None, :],
    )

    def nxt_of(k, wbal):
        """The balance after stage k from ``wbal``, for every level (the exact
        solution of the differential form at constant power)."""
        spent = wbal - (levels - cp) * t[k]
        recovered = w_prime - (w_prime - wbal) * np.exp(-np.maximum(cp - levels, 0) * t[k] / w_prime)
        return np.where(levels >= cp, spent, recovered)

    def solve(kappa):
        values = np.zeros((stages + 1, grid.size))
        for k in range(stages - 1, -1, -1):
            later = np.interp(nxt[k].ravel(), grid, values[k + 1]).reshape(nxt[k].shape)
            later[nxt[k] < 0] = np.inf
            values[k] = np.min(t[k][None, :] * (levels[None, :] + kappa) + later, axis=1)
        wbal, chosen = w_prime, []
        for k in range(stages):
            after = nxt_of(k, wbal)
            later = np.where(after >= 0, np.interp(after, grid, values[k + 1]), np.inf)
            c = int(np.argmin(t[k] * (levels + kappa) + later))
            chosen.append(c)
            wbal = after[c]
        chosen = np.array(chosen)
        spent = t[np.arange(stages), chosen]
        return chosen, np.sum(levels[chosen] * spent) / np.sum(spent)

    lo, hi = 1e-2 * mean_power, 1e3 * mean_power
    for _ in range(30):
        mid = math.sqrt(lo * hi)
        _, mean = solve(mid)
        lo, hi = (mid, hi) if mean < mean_power else (lo, mid)
    chosen, _ = solve(lo)
    power = np.repeat(levels[chosen], per)
    return np.concatenate((power, np.full(grade.size - power.size, power[-1])))


def _course(vehicle, s, z, wind):
    grade = np.diff(z) / np.diff(s)
    n = grade.size
    return Course(
        step=STEP,
        grade=grade,
        headwind=wind,
        air_density=np.full(n, RHO),
        distance=s,
        speed_cap=np.full(s.size, vehicle.max_descent_speed),
        deceleration=np.full(n, 0.25 * G),
        resistance=vehicle.resistance,
    )


@pytest.mark.parametrize("rider", list(RIDERS))
@pytest.mark.parametrize("route", list(ROUTES))
def test_the_plan_is_near_the_independent_optimum(route, rider):
    make, hilly = ROUTES[route]
    name, cp = RIDERS[rider]
    vehicle = builtin_vehicles()[name]
    w_prime = 70.0 * cp
    s, z, wind = make()
    course = _course(vehicle, s, z, wind)
    top = ceiling("best", cp, 0.10)
    plan = pace(course, mean_power=MEAN_SHARE * cp, cp=cp, w_prime=w_prime, top=top).pacing.power
    model = Model(vehicle)
    grade = course.grade
    t_plan, mean, w_low = model.ride(s, grade, wind, plan, cp, w_prime)
    # re-simulated, W′ is never below −1 % of W′0 (the bound)
    assert w_low >= -0.01 * w_prime
    t_const, _, _ = model.ride(s, grade, wind, np.full(grade.size, mean), cp, w_prime)
    # never slower than constant power at the same mean power (Swain 1997)
    assert t_plan <= t_const * (1 + 1e-4)
    if not hilly:
        return
    # the reference at the plan's own mean as ridden: two tries, then linear in the mean
    tries = []
    asked = mean
    for _ in range(2):
        power = reference_optimum(model, s, grade, wind, cp, w_prime, top, asked)
        t_ref, m_ref, w_ref = model.ride(s, grade, wind, power, cp, w_prime)
        tries.append((m_ref, t_ref))
        asked *= mean / m_ref
    (m1, t1), (m2, t2) = tries
    t_ref = t2 if abs(m2 - m1) < 1e-6 else t1 + (t2 - t1) * (mean - m1) / (m2 - m1)
    gain, best = t_const - t_plan, t_const - t_ref
    print(
        f"{route} {rider}: constant {t_const:.0f} s, plan {t_plan:.0f} s, optimum {t_ref:.0f} s at {mean:.1f} W"
    )
    assert best > 0
    # at least 90 % of the optimum's gain over constant power (the bound;
    # today's heuristic reached 71–92 %)
    assert gain >= 0.9 * best, (t_const, t_plan, t_ref)
