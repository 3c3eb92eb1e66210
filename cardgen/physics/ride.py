"""Riding a route: speed along a profile with inertia, speed limits and braking.

Everything is vectorised. The kinetic-energy balance along each segment is
linearised around a reference speed, which turns one step of the ride into a
clamped affine map of the squared speed; a chain of such maps is evaluated for all
segments at once with a parallel prefix scan, and the reference is re-centred on the
result a few times (a Newton iteration on the whole speed profile). With no losses
and no power the map is exact, so energy is conserved to rounding.

References
----------
Martin, J. C. et al. (1998). Validation of a mathematical model for road cycling
power. J. Appl. Biomech. 14:276–291 (the power balance and its kinetic term).
Hochbruck, M. & Ostermann, A. (2010). Exponential integrators. *Acta Numerica*
19:209–286 (the exponential Euler step).
Blelloch, G. E. (1990). Prefix sums and their applications. CMU-CS-90-190 (the scan).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.physics.forces import (
    ForceLaw,
    Resistance,
    aero_power,
    bearing_power,
    gravity_power,
    rolling_power,
)
from cardgen.physics.steady import speed_for_power
from cardgen.units import Floats

#: Stand-in for ±infinity in clamp bounds: keeps 0 × bound finite in the scan.
UNBOUNDED = 1e300


def clamp_affine_scan(a: Floats, b: Floats, lo: Floats, hi: Floats, x0: float) -> Any:
    """Iterate x[i+1] = clip(a[i]·x[i] + b[i], lo[i], hi[i]) for all i at once.

    Parameters
    ----------
    a : array, ≥ 0
    b, lo, hi : arrays of the same length n, lo ≤ hi
    x0 : float  the starting value

    Returns
    -------
    array of n + 1 values, x[0] = x0.

    Notes
    -----
    Maps x ↦ clip(a·x + b, l, h) with a ≥ 0 are closed under composition:
    f₂∘f₁ = (a₂a₁, a₂b₁ + b₂, clip(a₂l₁ + b₂, l₂, h₂), clip(a₂h₁ + b₂, l₂, h₂)).
    The maps are cut into about √n blocks; prefix compositions are built inside all
    blocks at once (√n vectorised steps), the values at the block starts follow
    from one pass over the block totals, and every x is then one clamp-affine map
    of its block's start (a blocked scan, Blelloch 1990).
    """
    a = np.asarray(a, dtype=float)
    n = a.size
    if n == 0:
        return np.array([x0], dtype=float)
    size = max(1, math.isqrt(n - 1) + 1)
    blocks = -(-n // size)
    pad = blocks * size - n

    def shaped(
        values: Any, fill: float
    ) -> Any:  # (size, blocks): step j of every block is one contiguous row
        values = np.clip(np.asarray(values, dtype=float), -UNBOUNDED, UNBOUNDED)
        return np.ascontiguousarray(np.concatenate((values, np.full(pad, fill))).reshape(blocks, size).T)

    pa, pb, pl, ph = shaped(a, 1.0), shaped(b, 0.0), shaped(lo, -UNBOUNDED), shaped(hi, UNBOUNDED)
    for j in range(1, size):  # prefix within every block: step j after steps 0…j−1
        a2, b2, l2, h2 = pa[j], pb[j], pl[j], ph[j]
        a1, b1, l1, h1 = pa[j - 1], pb[j - 1], pl[j - 1], ph[j - 1]
        pl[j] = np.minimum(np.maximum(a2 * l1 + b2, l2), h2)  # np.clip's overhead shows here
        ph[j] = np.minimum(np.maximum(a2 * h1 + b2, l2), h2)
        pb[j] = a2 * b1 + b2
        pa[j] = a2 * a1
    starts = np.empty(blocks)
    x = float(x0)
    last_a, last_b, last_l, last_h = (row[-1].tolist() for row in (pa, pb, pl, ph))
    for k in range(blocks):
        starts[k] = x
        x = min(last_h[k], max(last_l[k], last_a[k] * x + last_b[k]))
    values = np.clip(pa * starts[None, :] + pb, pl, ph).T.ravel()[:n]
    return np.concatenate(([x0], values))


def speed_limit_profile(distance: Floats, cap: Floats, deceleration: float) -> Any:
    """Highest speed at each node from which the rider can still brake down to every
    cap ahead.

    Parameters
    ----------
    distance : array [m] node positions
    cap : array [m/s] speed limit at each node (inf where none)
    deceleration : float [m/s²] braking deceleration

    Returns
    -------
    array [m/s]: v_lim,i = min over j ≥ i of √(cap_j² + 2·b·(s_j − s_i)).

    Notes
    -----
    Constant deceleration b: v² = v_j² + 2·b·Δs. The minimum over j ≥ i is a reverse
    cumulative minimum of cap_j² + 2·b·s_j.
    """
    s = np.asarray(distance, dtype=float)
    key = np.minimum(np.asarray(cap, dtype=float) ** 2, UNBOUNDED) + 2.0 * deceleration * s
    envelope = np.minimum.accumulate(key[::-1])[::-1]
    return np.sqrt(np.maximum(envelope - 2.0 * deceleration * s, 0.0))


@dataclass(frozen=True)
class Ride:
    """A simulated ride. Node arrays (n + 1): ``speed`` [m/s], ``elapsed`` [s].
    Segment arrays (n): ``mean_speed`` [m/s], ``time`` [s], ``rider_power`` and
    ``motor_power`` [W] (motor at the wheel), and the split [W]: ``rolling``,
    ``bearings``, ``aero``, ``gravity``, ``kinetic``, ``drivetrain``, ``braking`` (≥ 0,
    taken out by the brakes where a speed limit holds the speed down),
    ``limited`` (bool: a speed limit held the speed down), and ``residual`` [W]: what
    the step's linearisation leaves unbalanced (small; the tests bound it)."""

    speed: np.ndarray
    elapsed: np.ndarray
    mean_speed: np.ndarray
    time: np.ndarray
    rider_power: np.ndarray
    motor_power: np.ndarray
    rolling: np.ndarray
    bearings: np.ndarray
    aero: np.ndarray
    gravity: np.ndarray
    kinetic: np.ndarray
    drivetrain: np.ndarray
    braking: np.ndarray
    limited: np.ndarray
    residual: np.ndarray


def simulate(
    *,
    step: float,
    grade: Floats,
    headwind: Floats,
    air_density: Floats,
    resistance: Resistance,
    rider_power: Floats,
    speed_cap: Floats,
    distance: Floats,
    deceleration: float,
    motor: Callable[[np.ndarray, np.ndarray], np.ndarray] | None = None,
    start_speed: float | None = None,
    passes: int = 4,
) -> Ride:
    """Ride a profile of equal segments with the kinetic-energy balance.

    Parameters
    ----------
    step : float [m] horizontal segment length (as on a map); each segment is ridden
        over its slope length step·√(1 + G²)
    grade, headwind, air_density : arrays (n,) per segment [-], [m/s], [kg/m³]
    resistance : Resistance  mass, Crr, CdA, drivetrain, wheel inertia, bearings
    rider_power : array (n,) [W] the rider's power on each segment
    speed_cap : array (n + 1,) [m/s] limit at each node (descent cap, curves)
    distance : array (n + 1,) [m] node positions
    deceleration : float [m/s²] braking used to meet the caps
    motor : callable or None
        ``motor(speed, rider_power) -> power at the wheel [W]`` per segment.
    start_speed : float [m/s] or None
        None (the default) is a rolling start at the first segment's steady speed.
    passes : int  re-linearisations of the whole profile (4: see tests/test_ride.py)

    Returns
    -------
    Ride

    Notes
    -----
    Per segment, in u = v²: du/ds = (2/m_e)·(P_w/v − F(v)), m_e = m + I/r², P_w the
    power at the wheel, F the resisting force of Martin et al. (1998). Linearised at a
    reference speed v_r with J = −(P_w/v_r³ + F′(v_r)/v_r)/m_e, one exponential-Euler
    step is u₊ = u_r + (u − u_r)·e^{J·Δs} + r(u_r)·Δs·φ(J·Δs), φ(z) = (e^z − 1)/z,
    clamped to [0, v_lim²] (Hochbruck & Ostermann 2010).
    """
    res = resistance
    grade = np.asarray(grade, dtype=float)
    n = grade.size
    wind = np.broadcast_to(np.asarray(headwind, dtype=float), (n,))
    rho = np.broadcast_to(np.asarray(air_density, dtype=float), (n,))
    rider = np.broadcast_to(np.asarray(rider_power, dtype=float), (n,))
    cos_a = 1.0 / np.sqrt(1.0 + grade * grade)
    force = ForceLaw.build(
        mass=res.mass,
        crr=res.crr,
        cda=res.cda,
        grade=grade,
        headwind=wind,
        air_density=rho,
        bearings=res.bearings,
    )
    m_e = res.mass + res.wheel_inertia_mass
    length = step / cos_a  # along the slope
    limit = speed_limit_profile(distance, speed_cap, deceleration)
    hi = limit[1:] ** 2

    def steady(p_wheel: Floats) -> Any:
        v = speed_for_power(
            p_wheel,
            mass=res.mass,
            crr=res.crr,
            cda=max(res.cda, 1e-9),
            efficiency=1.0,
            grade=grade,
            headwind=wind,
            air_density=rho,
            bearings=res.bearings,
            rtol=1e-4,
        )
        return np.minimum(np.nan_to_num(v, nan=1.0, posinf=1.0), limit[1:])

    # First reference: the steady speed of each segment (with the motor at that speed).
    wheel_rider = np.where(rider > 0, rider * res.efficiency, rider)
    v_ref = steady(wheel_rider)
    if motor is not None:
        v_ref = steady(wheel_rider + motor(np.maximum(v_ref, 0.05), rider))
    v_ref = np.maximum(v_ref, 0.05)
    if start_speed is None:
        start_speed = float(v_ref[0])
    u = np.full(n + 1, start_speed**2)
    for _ in range(passes):
        motor_w = motor(v_ref, rider) if motor is not None else np.zeros(n)
        p_wheel = wheel_rider + motor_w
        f, df = force(v_ref)
        r = 2.0 / m_e * (p_wheel / v_ref - f)
        jac = -(p_wheel / v_ref**3 + df / v_ref) / m_e
        z = jac * length
        a = np.exp(z)
        with np.errstate(invalid="ignore", divide="ignore"):
            phi = np.where(np.abs(z) > 1e-12, np.expm1(z) / z, 1.0)
        u_r = v_ref * v_ref
        b = u_r * (1.0 - a) + r * length * phi
        u = clamp_affine_scan(a, b, np.zeros(n), hi, start_speed**2)
        v_nodes = np.sqrt(u)
        v_ref = np.maximum(0.5 * (v_nodes[:-1] + v_nodes[1:]), 0.05)

    speed = np.sqrt(u)
    mean_speed = 0.5 * (speed[:-1] + speed[1:])
    with np.errstate(divide="ignore"):
        time = np.where(mean_speed > 0, length / mean_speed, np.inf)
    motor_w = motor(np.maximum(mean_speed, 0.05), rider) if motor is not None else np.zeros(n)
    rolling = rolling_power(mean_speed, res.mass, res.crr, grade)
    bear = bearing_power(mean_speed) if res.bearings else np.zeros(n)
    aero = aero_power(mean_speed, res.cda, rho, wind)
    gravity = gravity_power(mean_speed, res.mass, grade)
    with np.errstate(invalid="ignore", divide="ignore"):
        kinetic = np.where(np.isfinite(time), 0.5 * m_e * (u[1:] - u[:-1]) / time, 0.0)
    drivetrain = rider - wheel_rider
    residual = wheel_rider + motor_w - (rolling + bear + aero + gravity + kinetic)
    limited = u[1:] >= hi * (1 - 1e-9)
    braking = np.where(limited, np.maximum(residual, 0.0), 0.0)
    return Ride(
        speed,
        np.concatenate(([0.0], np.cumsum(time))),
        mean_speed,
        time,
        rider.copy(),
        motor_w,
        rolling,
        bear,
        aero,
        gravity,
        kinetic,
        drivetrain,
        braking,
        limited,
        np.where(limited, residual - braking, residual),
    )
