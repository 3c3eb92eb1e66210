"""E-assist: motor power, battery use, and the assist level to choose.

Levels are numbered from 1 and named by their ratio ("level 2 (100 %)"); level 0 is
"off". Presets follow published legal envelopes and are named by rule.

References
----------
Regulation (EU) No 168/2013 of the European Parliament and of the Council, Art. 2(2)(h)
(OJ L 60, 2.3.2013): pedal assistance up to 250 W continuous rated power, cut off
before 25 km/h. EN 15194:2017, Cycles — Electrically power assisted cycles — EPAC
bicycles. 15 U.S.C. § 2085(b) (low-speed electric bicycles: < 750 W, < 20 mph).
California Vehicle Code § 312.5 (classes 1, 2 and 3).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from cardgen.physics.forces import Air, Resistance
from cardgen.physics.steady import steady_power, steady_speed
from cardgen.units import Floats, scalar_or_array


@dataclass(frozen=True)
class Motor:
    """An e-assist envelope, SI units: powers [W], speeds [m/s], battery [J]."""

    name: str
    label: str
    rule: str
    rated_power: float
    peak_power: float
    cutoff_speed: float
    taper: float
    drive_efficiency: float
    battery: float
    usable_share: float
    levels: tuple[float, ...]
    throttle: bool
    sources: Mapping[str, str] = field(default_factory=dict, compare=False)

    @property
    def usable_battery(self) -> float:
        """Energy that can be drawn [J]."""
        return self.battery * self.usable_share

    def level_name(self, level: int) -> str:
        """ "off", or "level N (R %)"."""
        if level == 0:
            return "off"
        return f"level {level} ({self.levels[level - 1] * 100:.0f} %)"


def taper_factor(speed: Floats, cutoff_speed: float, taper: float) -> Floats:
    """Share of assistance left at a speed: 1 below ``cutoff − taper``, falling
    linearly to 0 at the cut-off and above (the "progressively reduced and finally
    cut off" of Regulation (EU) No 168/2013, Art. 2(2)(h))."""
    v = np.asarray(speed, dtype=float)
    if taper <= 0:
        return np.where(v < cutoff_speed, 1.0, 0.0)[()]
    return np.clip((cutoff_speed - v) / taper, 0.0, 1.0)[()]


def motor_power(motor: Motor, ratio: Floats, speed: Floats, rider_power: Floats) -> Floats:
    """Motor power at the wheel [W].

    Parameters
    ----------
    motor : Motor
    ratio : float or array [-] assist ratio of the level in use (0 = off)
    speed : float or array [m/s]
    rider_power : float or array [W]

    Returns
    -------
    float or array [W]: min(ratio·rider power, peak) × taper factor; zero when the
    rider does not pedal (pedal assist) and at or above the cut-off speed.
    """
    p = np.asarray(rider_power, dtype=float)
    assist = np.minimum(np.asarray(ratio, dtype=float) * np.maximum(p, 0.0), motor.peak_power)
    return scalar_or_array(assist * taper_factor(speed, motor.cutoff_speed, motor.taper))


def motor_power_and_slope(
    motor: Motor, ratio: Floats, speed: Floats, rider_power: Floats, peak: Floats | None = None
) -> tuple[Any, Any]:
    """Motor power at the wheel [W] (as :func:`motor_power`, ``peak`` in place of the
    motor's where given: the thermal limit) and its derivative with speed [W·s/m]:
    −(assist)/taper inside the taper, 0 elsewhere."""
    p = np.asarray(rider_power, dtype=float)
    v = np.asarray(speed, dtype=float)
    top = motor.peak_power if peak is None else np.asarray(peak, dtype=float)
    assist = np.minimum(np.asarray(ratio, dtype=float) * np.maximum(p, 0.0), top)
    power = assist * taper_factor(v, motor.cutoff_speed, motor.taper)
    inside = (v > motor.cutoff_speed - motor.taper) & (v < motor.cutoff_speed) & (motor.taper > 0)
    slope = np.where(inside, -assist / max(motor.taper, 1e-9), 0.0)
    return power, slope


def battery_energy(motor: Motor, power: Floats, time: Floats) -> float:
    """Energy drawn from the battery [J] for motor powers [W] held for times [s]."""
    return float(np.sum(np.asarray(power) * np.asarray(time)) / motor.drive_efficiency)


def assisted_speed(
    motor: Motor,
    ratio: Floats,
    rider_power: Floats,
    *,
    resistance: Resistance,
    grade: Floats,
    air: Air,
    guess: Floats | None = None,
) -> Floats:
    """Steady speed [m/s] with the rider's power and assist at ``ratio``, on ``grade``
    [-] in ``air``; ``guess`` [m/s] starts the speed iterations (as in
    :func:`~cardgen.physics.steady.speed_for_power`).

    Notes
    -----
    The wheel power available, P_r·E + boost·taper(v), falls with speed inside the
    taper while the power needed rises, so there is one steady speed. Full assist
    stands when it stays below the taper; the rider alone stands when that already
    reaches the cut-off; otherwise the speed lies inside the taper and is found there
    to 1e-12 m/s (:func:`falling_root`).
    """
    rider_power = np.asarray(rider_power, dtype=float)
    wheel = np.where(rider_power > 0, rider_power * resistance.efficiency, rider_power)
    boost = np.minimum(ratio * np.maximum(rider_power, 0.0), motor.peak_power)
    road: dict[str, Any] = dict(resistance=resistance, grade=grade, air=air, at_wheel=True)
    full = np.asarray(steady_speed(wheel + boost, **road, rtol=1e-6, guess=guess), dtype=float)
    start = motor.cutoff_speed - motor.taper
    if motor.taper <= 0 or not np.any(full > start):
        alone = steady_speed(wheel, **road, rtol=1e-6, guess=guess)
        return np.where(full < motor.cutoff_speed, full, alone)[()]
    shape = np.broadcast(
        wheel, boost, full, *(np.asarray(x) for x in (grade, air.headwind, air.air_density))
    ).shape
    out = np.broadcast_to(full, shape).copy()
    # only where the assist reaches the taper does the rider's own speed matter (with
    # no assist it is the full speed already)
    boosted = (out > start) & (np.broadcast_to(boost, shape) > 0)
    if not boosted.any():
        return scalar_or_array(out)

    def at(x: Floats, mask: np.ndarray) -> np.ndarray:
        return np.asarray(np.broadcast_to(np.asarray(x, dtype=float), shape)[mask], dtype=float)

    def road_at(mask: np.ndarray) -> dict[str, Any]:
        return dict(
            resistance=resistance,
            grade=at(grade, mask),
            air=Air(at(air.headwind, mask), at(air.air_density, mask)),
            at_wheel=True,
        )

    first = None if guess is None else at(guess, boosted)
    alone = np.asarray(
        steady_speed(at(wheel, boosted), **road_at(boosted), rtol=1e-6, guess=first), dtype=float
    )
    out[boosted] = alone
    inside = np.zeros(shape, dtype=bool)
    inside[boosted] = alone < motor.cutoff_speed
    if inside.any():  # bisect only where the speed lies inside the taper
        lo = np.maximum(alone[alone < motor.cutoff_speed], start)
        hi = np.minimum(at(full, inside), motor.cutoff_speed)
        wheel_i, boost_i, there = at(wheel, inside), at(boost, inside), road_at(inside)

        def surplus(v: np.ndarray, sel: np.ndarray) -> np.ndarray:
            road = dict(there, grade=there["grade"][sel], air=there["air"].over(sel))
            taper = taper_factor(v, motor.cutoff_speed, motor.taper)
            return np.asarray(wheel_i[sel] + boost_i[sel] * taper - steady_power(v, **road), dtype=float)

        out[inside] = falling_root(surplus, lo, hi)
    return out[()]


#: The taper's speed is found to this width [m/s] (far below any printed digit) …
ROOT_WIDTH = 1e-12
#: … in at most this many steps.
ROOT_STEPS = 60


def falling_root(fun: Any, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """Where ``fun(v, sel)`` (of the elements ``sel``) falls through 0 between ``lo``
    and ``hi`` [m/s], element by element: the end where it keeps one sign throughout
    (``lo`` where it is ≤ 0 there, ``hi`` where it is still > 0 at ``hi``).

    Notes
    -----
    The Illinois variant of regula falsi (Dowell & Jarratt 1971): the bracket shrinks
    from both ends, superlinearly, to :data:`ROOT_WIDTH`; elements that have
    converged drop out.

    References
    ----------
    Dowell, M. & Jarratt, P. (1971). A modified regula falsi method for computing the
    root of an equation. *BIT* 11:168–174.
    """
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    every = np.arange(lo.size)
    f_lo, f_hi = fun(lo, every), fun(hi, every)
    out = np.where(f_lo <= 0, lo, hi)
    active = np.flatnonzero((f_lo > 0) & (f_hi <= 0) & (hi - lo > ROOT_WIDTH))
    a, b, fa, fb = lo[active], hi[active], f_lo[active], f_hi[active]
    side = np.zeros(active.size, dtype=np.int8)  # the end moved last: 1 low, −1 high
    for _ in range(ROOT_STEPS):
        if not active.size:
            break
        x = np.clip(b - fb * (b - a) / (fb - fa), a, b)
        f = fun(x, active)
        up = f > 0
        # Illinois: an end kept twice in a row has its value halved
        fb = np.where(up & (side == 1), 0.5 * fb, fb)
        fa = np.where(~up & (side == -1), 0.5 * fa, fa)
        a, fa = np.where(up, x, a), np.where(up, f, fa)
        b, fb = np.where(up, b, x), np.where(up, fb, f)
        side = np.where(up, 1, -1).astype(np.int8)
        out[active] = 0.5 * (a + b)
        done = (b - a <= ROOT_WIDTH) | (f == 0)
        out[active[f == 0]] = x[f == 0]
        active, a, b, fa, fb, side = (v[~done] for v in (active, a, b, fa, fb, side))
    return out


def rider_power_for_speed(
    motor: Motor | None,
    ratio: Floats,
    speed: Floats,
    *,
    resistance: Resistance,
    grade: Floats,
    air: Air,
) -> Floats:
    """Rider's pedal power [W] to hold ``speed`` with assist at ``ratio`` (0 = none),
    on ``grade`` [-] in ``air``.

    Notes
    -----
    At the wheel P_need = P_rider·E + min(ratio·P_rider, P_peak)·taper(v); solved for
    P_rider on the branch below the peak, else with the motor at its peak.
    """
    need = steady_power(speed, resistance=resistance, grade=grade, air=air, at_wheel=True)
    eff = resistance.efficiency
    if motor is None:
        return np.where(need > 0, need / eff, 0.0)
    f = taper_factor(speed, motor.cutoff_speed, motor.taper)
    p = need / (eff + ratio * f)
    over_peak = ratio * p > motor.peak_power
    p = np.where(over_peak, (need - motor.peak_power * f) / eff, p)
    return np.maximum(p, 0.0)


def climb_options(
    motor: Motor,
    climbs: Sequence[tuple[int, int]],
    *,
    climb_power: float,
    cp: float,
    target_speed: float,
    resistance: Resistance,
    grade: Floats,
    air: Air,
    step: float,
    w_prime: float = 0.0,
) -> dict[str, np.ndarray]:
    """What each assist level does on each climb, all solved at once (steady speeds).

    Returns arrays of shape (levels 0…N, climbs): ``slowest`` [m/s] the slowest
    segment, ``time`` [s], ``battery`` [J] drawn, and ``within_cp`` (bool): the rider
    holds the target speed within CP: the climb's mean power at the target no more
    than CP, and the work above CP on its steeper pitches within ``w_prime`` [J] (the
    critical-power model, Monod & Scherrer 1965; with ``w_prime`` 0, every segment
    within CP). The rider rides at the power the target speed needs, at most
    ``climb_power``, and eases off at the target.
    """
    segments = [np.arange(start, end) for start, end in climbs]
    idx = np.concatenate(segments)
    starts = np.cumsum([0] + [len(x) for x in segments[:-1]])
    grade = np.asarray(grade, dtype=float)[idx]
    ratios = np.array([0.0, *motor.levels])[:, None]
    road: dict[str, Any] = dict(grade=grade, air=air.over(idx))
    wanted = rider_power_for_speed(motor, ratios, target_speed, resistance=resistance, **road)
    power = np.minimum(wanted, climb_power)
    speed = np.minimum(assisted_speed(motor, ratios, power, resistance=resistance, **road), target_speed)
    length = step * np.sqrt(1.0 + grade**2)
    with np.errstate(divide="ignore"):
        seconds = np.where(speed > 0, length / speed, np.inf)
    drawn = motor_power(motor, ratios, speed, power) * seconds / motor.drive_efficiency
    at_target = length / target_speed  # [s] on each segment at the target speed
    mean = np.add.reduceat(wanted * at_target, starts, axis=1) / np.add.reduceat(at_target, starts)
    above = np.add.reduceat(np.maximum(wanted - cp, 0.0) * at_target, starts, axis=1)  # [J] above CP
    return dict(
        slowest=np.minimum.reduceat(speed, starts, axis=1),
        time=np.add.reduceat(seconds, starts, axis=1),
        battery=np.add.reduceat(np.nan_to_num(drawn, posinf=0.0), starts, axis=1),
        within_cp=(mean <= cp * (1 + 1e-9)) & (above <= w_prime * (1 + 1e-9) + 1e-6),
    )
