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

import dataclasses
import functools
import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.physics.assist import Motor, motor_power_and_slope
from cardgen.physics.forces import (
    Air,
    ForceLaw,
    Resistance,
    aero_power,
    bearing_power,
    gravity_power,
    rolling_power,
)
from cardgen.physics.steady import steady_speed
from cardgen.units import Floats

#: Passes end when no segment's reference speed moves by more than this share …
TOLERANCE = 1e-6
#: … or after this many passes (Ride.converged then says False).
MAX_PASSES = 80
#: The first solve, which only finds the segments to cut, stops at this change.
ROUGH = 1e-2
#: Passes after this one move the reference half way only (damping); earlier
#: passes too once a pass closes in by less than half.
DAMP_AFTER = 12
#: Passes over which a damped solve must close in; if the largest change of the last
#: CYCLE passes is not clearly below that of the CYCLE before, the share moved is
#: halved, down to MIN_RELAX.
CYCLE = 4
MIN_RELAX = 1.0 / 64
#: Time constant [s] of the motor's thermal filter: of the order of the period over
#: which a continuous rating holds; common practice, no published source.
THERMAL_TIME = 600.0
#: Rounds of re-solving with the thermal limit (each round only lowers the allowed peak).
THERMAL_ROUNDS = 6
#: A segment whose u = v² changes by more than this share of itself is cut into parts …
SUBSTEP_CHANGE = 0.1
#: … at most this many.
MAX_SUBSTEPS = 32
#: Stand-in for ±infinity in clamp bounds: keeps 0 × bound finite in the scan.
UNBOUNDED = 1e300


@dataclass(frozen=True)
class RideTimes:
    """What pages and cards need of a :class:`Ride` (``elapsed`` [s] at the nodes;
    ``time`` [s] and ``rider_power`` [W] per segment; the passes): a build keeps only
    this of each of its hundreds of plans, about a fifth of the memory."""

    elapsed: np.ndarray
    time: np.ndarray
    rider_power: np.ndarray
    passes: int = 0
    converged: bool = True


def clamp_affine_scan(a: Floats, b: Floats, lo: Floats, hi: Floats, x0: float) -> np.ndarray:
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
    ) -> np.ndarray:  # (size, blocks): step j of every block is one contiguous row
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


def speed_limit_profile(distance: Floats, cap: Floats, deceleration: Floats) -> np.ndarray:
    """Highest speed at each node from which the rider can still brake down to every
    cap ahead.

    Parameters
    ----------
    distance : array [m] node positions
    cap : array [m/s] speed limit at each node (inf where none)
    deceleration : float, or array per segment [m/s²] braking deceleration (on a
        descent less than on the flat: see the Notes)

    Returns
    -------
    array [m/s]: v_lim,i = min over j ≥ i of √(cap_j² + 2·(B_j − B_i)), B the braking
    work per unit mass Σ b_k·Δs_k from the start.

    Notes
    -----
    v² = v_j² + 2·Σ b_k·Δs_k between node i and a cap at node j. The minimum over
    j ≥ i is a reverse cumulative minimum of cap_j² + 2·B_j. With b = g·(f + G) on a
    grade G this is the braking term of the stopping-sight-distance formula
    S = V²/(254·(f ± G)) of the AASHTO Guide for the Development of Bicycle
    Facilities (1999).
    """
    s = np.asarray(distance, dtype=float)
    b = np.broadcast_to(np.asarray(deceleration, dtype=float), (max(s.size - 1, 0),))
    work = np.concatenate(([0.0], np.cumsum(b * np.diff(s))))
    key = np.minimum(np.asarray(cap, dtype=float) ** 2, UNBOUNDED) + 2.0 * work
    envelope = np.minimum.accumulate(key[::-1])[::-1]
    return np.sqrt(np.maximum(envelope - 2.0 * work, 0.0))


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
    passes: int = 0  # re-linearisations used
    converged: bool = True  # the passes met the tolerance


def simulate(
    *,
    step: float,
    grade: Floats,
    air: Air,
    resistance: Resistance,
    rider_power: Floats,
    speed_cap: Floats,
    distance: Floats,
    deceleration: Floats,
    motor: Motor | None = None,
    assist_ratio: Floats = 0.0,
    start_speed: float | None = None,
    tolerance: float = TOLERANCE,
    max_passes: int = MAX_PASSES,
    warm: Floats | None = None,
) -> Ride:
    """Ride a profile of equal segments with the kinetic-energy balance.

    Parameters
    ----------
    step : float [m] horizontal segment length (as on a map); each segment is ridden
        over its slope length step·√(1 + G²)
    grade : array (n,) per segment [-]
    air : Air, headwind and air density per segment (floats or arrays (n,))
    resistance : Resistance  mass, Crr, CdA, drivetrain, wheel inertia, bearings
    rider_power : array (n,) [W] the rider's power on each segment
    speed_cap : array (n + 1,) [m/s] limit at each node (descent cap, curves)
    distance : array (n + 1,) [m] node positions
    deceleration : float or array (n,) [m/s²] braking used to meet the caps
    motor : Motor or None  the e-assist envelope, with ``assist_ratio`` (n,) per segment
    start_speed : float [m/s] or None
        None (the default) is a rolling start at the first segment's steady speed.
    tolerance : float  passes end when no node's speed moves by more than
        this share between passes (1e-6), at every node
    max_passes : int  at most this many passes; ``Ride.converged`` says whether the
        tolerance was met
    warm : array (n + 1,) [m/s] or None: node speeds of a ride at nearly the same
        power (a re-ride), the first reference of the first solve in place of the
        steady speeds (fewer passes; the rolling start is still the first segment's
        steady speed). The result agrees with a cold start to the tolerance.

    Returns
    -------
    Ride

    Notes
    -----
    Per segment, in u = v²: du/ds = (2/m_e)·(P_w/v − F(v)), m_e = m + I/r², P_w the
    power at the wheel (rider and motor, the motor's taper near its cut-off included),
    F the resisting force of Martin et al. (1998). Linearised at a reference speed v_r
    with J = (P_m′/v_r² − P_w/v_r³ − F′(v_r)/v_r)/m_e, one exponential-Euler step is
    u₊ = u_r + (u − u_r)·e^{J·Δs} + r(u_r)·Δs·φ(J·Δs), φ(z) = (e^z − 1)/z, clamped to
    [0, v_lim²] (Hochbruck & Ostermann 2010). The references are moved to the result
    until they settle (``tolerance``). Where the speed still changes by more than
    :data:`SUBSTEP_CHANGE` of itself within a segment (into a steep ramp, say), that
    segment is cut into up to :data:`MAX_SUBSTEPS` parts and the whole ride solved
    again on the finer grid; the results are summed back onto the segments.
    """
    grade = np.asarray(grade, dtype=float)
    n = grade.size
    rows = dict(
        grade=grade,
        headwind=np.broadcast_to(np.asarray(air.headwind, dtype=float), (n,)).copy(),
        air_density=np.broadcast_to(np.asarray(air.air_density, dtype=float), (n,)).copy(),
        rider=np.broadcast_to(np.asarray(rider_power, dtype=float), (n,)).copy(),
        ratio=np.broadcast_to(np.asarray(assist_ratio, dtype=float), (n,)).copy(),
        step=np.full(n, float(step)),
        peak=np.full(n, motor.peak_power if motor is not None else 0.0),
    )
    solve = functools.partial(
        _solve,
        resistance=resistance,
        motor=motor,
        speed_cap=speed_cap,
        distance=distance,
        deceleration=deceleration,
        start_speed=start_speed,
        tolerance=tolerance,
        max_passes=max_passes,
        warm=None if warm is None else np.asarray(warm, dtype=float),
    )
    ride = solve(rows)
    if motor is None or motor.rated_power >= motor.peak_power:
        return ride
    # The continuous rating as a thermal limit: the motor's output, filtered with a
    # time constant of THERMAL_TIME, never exceeds its rated power.
    for _ in range(THERMAL_ROUNDS):
        peak = thermal_peak(motor, ride.motor_power, ride.time, rows["peak"])
        if np.allclose(peak, rows["peak"]):
            break
        rows["peak"] = peak
        ride = solve(rows)
    return ride


def _solve(
    rows: dict[str, np.ndarray],
    *,
    resistance: Resistance,
    motor: Motor | None,
    speed_cap: Floats,
    distance: Floats,
    deceleration: Floats,
    start_speed: float | None,
    tolerance: float,
    max_passes: int,
    warm: np.ndarray | None = None,
) -> Ride:
    """One solve of :func:`simulate` on the rows given: coarse, then cut where needed."""
    n = rows["grade"].size
    limit = speed_limit_profile(distance, speed_cap, deceleration)
    # a first, looser solve finds the segments to cut; the final one meets the tolerance
    coarse = _scan(rows, resistance, motor, limit, start_speed, max(tolerance, ROUGH), max_passes, warm)
    u = coarse["u"]
    with np.errstate(invalid="ignore", divide="ignore"):
        change = np.abs(np.diff(u)) / np.maximum(np.maximum(u[1:], u[:-1]), 1e-6)
    pieces = np.clip(np.ceil(change / SUBSTEP_CHANGE), 1, MAX_SUBSTEPS).astype(int) if n else np.ones(0, int)
    if n == 0:
        return _ride(coarse, rows, resistance)
    if pieces.max() == 1:
        if tolerance >= ROUGH:
            return _ride(coarse, rows, resistance)
        speeds = np.sqrt(coarse["u"])
        final = _scan(
            rows,
            resistance,
            motor,
            limit,
            float(speeds[0]),
            tolerance,
            max_passes,
            speeds,
        )
        final["passes"] += coarse["passes"]
        return _ride(final, rows, resistance)
    fine_rows = {key: np.repeat(value, pieces) for key, value in rows.items()}
    fine_rows["step"] = np.repeat(rows["step"] / pieces, pieces)
    fine_distance = np.concatenate(
        ([float(np.asarray(distance)[0])], np.cumsum(fine_rows["step"]) + np.asarray(distance)[0])
    )
    fine_cap = np.full(fine_distance.size, np.inf)
    boundaries = np.concatenate(([0], np.cumsum(pieces)))
    fine_cap[boundaries] = np.asarray(speed_cap, dtype=float)
    fine_braking = np.repeat(np.broadcast_to(np.asarray(deceleration, dtype=float), (n,)), pieces)
    fine_limit = speed_limit_profile(fine_distance, fine_cap, fine_braking)
    coarse_speed = np.sqrt(coarse["u"])
    guess = np.interp(fine_distance, np.asarray(distance, dtype=float), coarse_speed)
    fine = _scan(
        fine_rows, resistance, motor, fine_limit, float(coarse_speed[0]), tolerance, max_passes, guess
    )
    fine["passes"] += coarse["passes"]
    return _ride(_coarsen(fine, boundaries, resistance), rows, resistance)


def _steady_reference(
    rows: dict[str, np.ndarray], resistance: Resistance, motor: Motor | None, limit: np.ndarray
) -> np.ndarray:
    """The steady speed [m/s] of each segment of ``rows``, with the motor at that
    speed, below the ``limit`` at its end node: the first reference of a pass."""
    grade, rider, ratio = rows["grade"], rows["rider"], rows["ratio"]
    air = Air(rows["headwind"], rows["air_density"])
    wheel_rider = np.where(rider > 0, rider * resistance.efficiency, rider)
    solvable = dataclasses.replace(resistance, cda=max(resistance.cda, 1e-9))

    def steady(p_wheel: Floats) -> np.ndarray:
        v = steady_speed(p_wheel, resistance=solvable, grade=grade, air=air, at_wheel=True, rtol=1e-4)
        return np.asarray(np.minimum(np.nan_to_num(v, nan=1.0, posinf=1.0), limit[1:]))

    v_ref = steady(wheel_rider)
    for _ in range(3 if motor is not None else 0):  # the motor's share depends on the speed
        assert motor is not None
        drive = motor_power_and_slope(motor, ratio, np.maximum(v_ref, 0.05), rider, rows["peak"])[0]
        v_ref = steady(wheel_rider + drive)
    return np.asarray(np.maximum(v_ref, 0.05))


def _scan(
    rows: dict[str, np.ndarray],
    resistance: Resistance,
    motor: Motor | None,
    limit: np.ndarray,
    start_speed: float | None,
    tolerance: float,
    max_passes: int,
    first_guess: np.ndarray | None = None,
) -> dict[str, Any]:
    """The converged passes of :func:`simulate` on one grid: node u = v², and per
    segment time [s], motor power [W], whether a limit held the speed, passes used.
    ``first_guess`` [m/s] at each node replaces the steady speeds as the first
    reference."""
    grade, rider, ratio = rows["grade"], rows["rider"], rows["ratio"]
    air = Air(rows["headwind"], rows["air_density"])
    n = grade.size
    cos_a = 1.0 / np.sqrt(1.0 + grade * grade)
    force = ForceLaw.of(resistance, grade=grade, air=air)
    m_e = resistance.mass + resistance.wheel_inertia_mass
    length = rows["step"] / cos_a  # along the slope
    hi = limit[1:] ** 2
    wheel_rider = np.where(rider > 0, rider * resistance.efficiency, rider)
    no_motor = np.zeros(n)

    def drive(v: np.ndarray) -> tuple[Any, Any]:
        if motor is None:
            return no_motor, no_motor
        return motor_power_and_slope(motor, ratio, v, rider, rows["peak"])

    # First reference: the steady speed of each segment (with the motor at that speed).
    if first_guess is not None:
        v_ref = np.maximum(0.5 * (first_guess[:-1] + first_guess[1:]), 0.05)
        if start_speed is None and n:  # a rolling start at the first segment's steady speed
            first = {key: value[:1] for key, value in rows.items()}
            start_speed = float(_steady_reference(first, resistance, motor, limit[:2])[0])
    else:
        v_ref = _steady_reference(rows, resistance, motor, limit)
    if start_speed is None:
        start_speed = float(v_ref[0]) if n else 0.0
    u = np.full(n + 1, start_speed**2)
    # node speeds of the first reference: a good guess can be judged settled at once
    v_last = np.asarray(first_guess, dtype=float) if first_guess is not None else np.sqrt(u)
    used, change, damped, relax = 0, 0.0, False, 0.5
    history: list[float] = []
    for used in range(1, max_passes + 1):
        motor_w, motor_slope = drive(v_ref)
        p_wheel = wheel_rider + motor_w
        f, df = force(v_ref)
        r = 2.0 / m_e * (p_wheel / v_ref - f)
        # the Jacobian carries every speed-dependent term, the motor's taper included
        jac = (motor_slope / v_ref**2 - p_wheel / v_ref**3 - df / v_ref) / m_e
        z = jac * length
        a = np.exp(z)
        with np.errstate(invalid="ignore", divide="ignore"):
            phi = np.where(np.abs(z) > 1e-12, np.expm1(z) / z, 1.0)
        u_r = v_ref * v_ref
        b = u_r * (1.0 - a) + r * length * phi
        u = clamp_affine_scan(a, b, np.zeros(n), hi, start_speed**2)
        v_nodes = np.sqrt(u)
        v_new = np.maximum(0.5 * (v_nodes[:-1] + v_nodes[1:]), 0.05)
        # settled when no node's speed moved by more than the tolerance since the last pass
        last_change = change
        change = float(np.max(np.abs(v_nodes - v_last) / np.maximum(v_last, 0.5))) if n else 0.0
        v_last = v_nodes
        # once the passes stop closing in (a reference that flips across a motor's
        # taper or a stall), or after DAMP_AFTER passes, each moves half way only
        damped = damped or used > DAMP_AFTER or (used > 2 and change > 0.5 * last_change)
        history.append(change)
        if (
            damped
            and len(history) > 2 * CYCLE
            and max(history[-CYCLE:]) >= 0.9 * max(history[-2 * CYCLE : -CYCLE])
        ):
            # the passes cycle (a reference that flips across the kink where a motor's
            # taper begins): move a smaller share of the way, which settles any cycle
            # of a map whose slope is below one there
            relax = max(relax / 2, MIN_RELAX)
            history.clear()
        v_ref = v_ref + relax * (v_new - v_ref) if damped else v_new
        if change <= tolerance:
            break
    speed = np.sqrt(u)
    mean_speed = 0.5 * (speed[:-1] + speed[1:])
    with np.errstate(divide="ignore"):
        time = np.where(mean_speed > 0, length / mean_speed, np.inf)
    return dict(
        u=u,
        time=time,
        motor=drive(np.maximum(mean_speed, 0.05))[0],
        limited=u[1:] >= hi * (1 - 1e-9),
        passes=used,
        converged=change <= tolerance,
    )


def _coarsen(fine: dict[str, Any], boundaries: np.ndarray, resistance: Resistance) -> dict[str, Any]:
    """Fine-grid results summed back onto the segments they were cut from."""
    starts = boundaries[:-1]
    time = np.add.reduceat(fine["time"], starts)
    with np.errstate(invalid="ignore"):
        motor = np.add.reduceat(np.nan_to_num(fine["motor"] * fine["time"], posinf=0.0), starts) / time
    return dict(
        u=fine["u"][boundaries],
        time=time,
        motor=np.nan_to_num(motor),
        limited=np.maximum.reduceat(fine["limited"], starts),
        passes=fine["passes"],
        converged=fine["converged"],
    )


def _ride(result: dict[str, Any], rows: dict[str, np.ndarray], resistance: Resistance) -> Ride:
    """The Ride of a solved grid: speeds, times, and the power split of each segment."""
    grade, rider = rows["grade"], rows["rider"]
    u, time = result["u"], result["time"]
    n = grade.size
    length = rows["step"] * np.sqrt(1.0 + grade * grade)
    speed = np.sqrt(u)
    with np.errstate(divide="ignore", invalid="ignore"):
        mean_speed = np.where(np.isfinite(time) & (time > 0), length / time, 0.0)
    motor_w = result["motor"]
    m_e = resistance.mass + resistance.wheel_inertia_mass
    wheel_rider = np.where(rider > 0, rider * resistance.efficiency, rider)
    rolling = np.asarray(rolling_power(mean_speed, resistance.mass, resistance.crr, grade))
    bear = np.asarray(bearing_power(mean_speed) if resistance.bearings else np.zeros(n))
    aero = np.asarray(aero_power(mean_speed, resistance.cda, rows["air_density"], rows["headwind"]))
    gravity = np.asarray(gravity_power(mean_speed, resistance.mass, grade))
    with np.errstate(invalid="ignore", divide="ignore"):
        kinetic = np.where(np.isfinite(time), 0.5 * m_e * (u[1:] - u[:-1]) / time, 0.0)
    drivetrain = rider - wheel_rider
    residual = wheel_rider + motor_w - (rolling + bear + aero + gravity + kinetic)
    limited = np.asarray(result["limited"], dtype=bool)
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
        int(result["passes"]),
        bool(result["converged"]),
    )


def thermal_peak(motor: Motor, motor_power: np.ndarray, time: np.ndarray, peak: np.ndarray) -> np.ndarray:
    """The most the motor may give on each segment [W] so that its output, filtered
    with time constant :data:`THERMAL_TIME`, stays at or below its rated power.

    Notes
    -----
    The filter f₊ = f·e + P·(1 − e), e = exp(−Δt/τ), starts cold (f = 0); on a
    segment it may give P ≤ (rated − f·e)/(1 − e), never less than the rated power
    (which holds f at or below it) nor more than ``peak`` already allowed.
    """
    dt = np.nan_to_num(np.asarray(time, dtype=float), nan=0.0, posinf=0.0)
    decay = np.exp(-dt / THERMAL_TIME)
    unbounded = np.full(dt.size, UNBOUNDED)
    level = clamp_affine_scan(decay, (1.0 - decay) * motor_power, -unbounded, unbounded, 0.0)[:-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        room = np.where(decay < 1.0, (motor.rated_power - level * decay) / (1.0 - decay), np.inf)
    return np.asarray(np.minimum(peak, np.maximum(motor.rated_power, room)), dtype=float)
