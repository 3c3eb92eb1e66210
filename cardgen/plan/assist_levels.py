"""Assist levels chosen with the pacing plan, in one optimisation with the battery.

Each stretch (every climb, and the route between climbs) asks for a level: on a
climb the lowest that holds the rider's target speed within CP, between climbs the
rider's own ``assist_between_climbs``. When the planned ride with those levels draws
more than the battery budget (the usable battery less the reserve), levels are
chosen within the budget: candidates come from an exact multiple-choice knapsack
over the stretches (:func:`best_levels`: walking least, then the pacing plan's own
objective), for each level between the climbs; each is planned on steady speeds and
judged there, and only the best is ridden and its draw checked against the budget
(:func:`pace_assisted`). Whatever the levels, once the battery is empty the motor
gives nothing (:func:`~cardgen.plan.pacing.pace`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from cardgen.physics.assist import assisted_speed, battery_energy, motor_power
from cardgen.plan.pacing import STALL_TIME, Course, PacedRide, Pacer, block_times

#: Plans of a choice of levels whose ride may still pass the budget, each lowering
#: the levels by what the last ride drew beyond its estimate.
FIT_TRIES = 3
#: Between the climbs the slowest 5 % of the segments decide whether a level keeps
#: the rider riding (short ramps off the climbs do not: common practice, no
#: published source).
BETWEEN_PERCENTILE = 5.0


@dataclass(frozen=True)
class Stretch:
    """Where one assist level holds: ``segments`` (bool per segment), the level it
    asks for (``wanted``), and whether it is a climb (its slowest segment decides
    walking) or the route between climbs (:data:`BETWEEN_PERCENTILE`)."""

    segments: np.ndarray
    wanted: int
    climb: bool


def assist_ratio(course: Course, stretches: Sequence[Stretch], levels: Sequence[int]) -> np.ndarray:
    """Assist ratio [-] on every segment for one level per stretch (0 = off)."""
    if course.motor is None:
        raise ValueError("assist levels need a course with a motor")
    ratio = np.zeros(course.grade.size)
    for stretch, level in zip(stretches, levels, strict=True):
        ratio[stretch.segments] = 0.0 if level == 0 else course.motor.levels[level - 1]
    return ratio


#: Every segment.
ALL = slice(None)


def _steady(
    course: Course, ratio: np.ndarray, power: np.ndarray, index: np.ndarray | slice = ALL
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Steady speed [m/s], time [s] and battery drawn [J] on the segments ``index`` at
    rider ``power`` [W] (one per segment asked) and assist ``ratio`` [-] (broadcast
    against it), capped by the braking envelope."""
    motor = course.motor
    if motor is None:
        raise ValueError("assist levels need a course with a motor")
    speed = assisted_speed(
        motor,
        ratio,
        power,
        resistance=course.resistance,
        grade=course.grade[index],
        air=course.air.over(index),
    )
    speed = np.minimum(np.nan_to_num(np.asarray(speed, dtype=float), nan=0.0), course.speed_limit[index])
    length = course.step * np.sqrt(1.0 + course.grade[index] ** 2)
    with np.errstate(divide="ignore"):
        seconds = np.minimum(np.where(speed > 0, length / speed, STALL_TIME), STALL_TIME)
    drawn = motor_power(motor, ratio, speed, power) * seconds / motor.drive_efficiency
    return speed, seconds, np.nan_to_num(np.asarray(drawn, dtype=float), posinf=0.0)


def _ratios(course: Course) -> np.ndarray:
    """Assist ratio [-] of every level, 0 (off) first: a column (levels, 1)."""
    if course.motor is None:
        raise ValueError("assist levels need a course with a motor")
    return np.array([0.0, *course.motor.levels])[:, None]


def level_options(course: Course, stretches: Sequence[Stretch], power: np.ndarray) -> dict[str, np.ndarray]:
    """What each level does on each stretch at the planned rider ``power`` [W] per
    segment (or per level and segment), on steady speeds capped by the braking
    envelope: arrays (levels 0…N, stretches) of ``time`` [s], ``battery`` [J] drawn,
    ``slowest`` [m/s] and the rider's ``work`` [J]."""
    ratios = _ratios(course)
    power = np.broadcast_to(power, (ratios.size, power.shape[-1]))
    columns: dict[str, list[np.ndarray]] = {"time": [], "battery": [], "slowest": [], "work": []}
    for stretch in stretches:
        i = np.flatnonzero(stretch.segments)
        speed, seconds, drawn = _steady(course, ratios, power[:, i], i)
        columns["time"].append(seconds.sum(axis=1))
        columns["work"].append((seconds * power[:, i]).sum(axis=1))
        columns["battery"].append(drawn.sum(axis=1))
        slowest = speed.min(axis=1) if stretch.climb else np.percentile(speed, BETWEEN_PERCENTILE, axis=1)
        columns["slowest"].append(slowest)
    return {key: np.column_stack(value) for key, value in columns.items()}


def priced_options(
    course: Course, stretches: Sequence[Stretch], *, kappa: float, top: float
) -> dict[str, np.ndarray]:
    """:func:`level_options` with the rider's power chosen for each level: on every
    block the steady power that minimises t·(P + κ) at that level's assist, the
    pacing plan's own rule without W′ (:mod:`cardgen.plan.pacing`), so a level's time
    counts what the rider would do with it. Adds ``cost`` = time·κ + work [J], the
    plan's objective at the multiplier ``kappa`` [W]; ``top`` [W] the ceiling."""
    ratios = _ratios(course)[:, 0]
    power = np.empty((ratios.size, course.grade.size))
    for row, ratio in enumerate(ratios):
        table = block_times(dataclasses.replace(course, assist_ratio=np.full(course.grade.size, ratio)), top)
        best = np.argmin(table.times * (table.powers[:, None] + kappa), axis=0)
        power[row] = np.repeat(table.powers[best], np.diff(table.starts))
    options = level_options(course, stretches, power)
    options["cost"] = options["time"] * kappa + options["work"]
    return options


def pace_assisted(
    course: Course,
    stretches: Sequence[Stretch],
    pacer: Pacer,
    *,
    budget: float,
    min_speed: float,
) -> tuple[PacedRide, list[int]]:
    """The rider's pacing plan and the assist level of each stretch, chosen together,
    the battery drawn kept within ``budget``.

    Parameters
    ----------
    course : Course with a motor (its ``assist_ratio`` is replaced)
    stretches : the climbs and the route between them
    pacer : the rider's pacing (:class:`~cardgen.plan.pacing.Pacer`)
    budget : float [J] battery to spend (the usable battery less the reserve)
    min_speed : float [m/s] the slowest the vehicle is ridden without walking

    Returns
    -------
    (PacedRide, levels): the plan ridden with the chosen levels, one level per stretch.

    Notes
    -----
    The levels asked for are planned and ridden first; when their ride draws more
    than the budget, candidate levels are built near the budget (:func:`_candidates`),
    each planned on steady speeds (:meth:`~cardgen.plan.pacing.Pacer.steady`, no ride)
    and judged there (:func:`_judge`: walking least, then quickest at the day's mean).
    The best are ridden in turn (at most :data:`FIT_TRIES`) until one keeps the
    reserve on its ride, which carries speed into climbs and so draws a little
    less than the steady plan. When none does, levels are lowered where they save
    least time per joule until the estimate, corrected by what it missed of the
    ride, fits (:func:`lower_within`), and ridden again. Only when that fails too does
    the battery's own cut decide (the card's reserve warning then stands).
    """
    motor = course.motor
    if motor is None:
        raise ValueError("assist levels need a course with a motor")

    def on(levels: Sequence[int]) -> Course:
        return dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, levels))

    def fits(ridden: PacedRide) -> bool:
        return battery_energy(motor, ridden.ride.motor_power, ridden.ride.time) <= budget

    wanted = [s.wanted for s in stretches]
    paced = pacer(on(wanted), cut=False)
    if fits(paced):
        return paced, wanted
    levels = [0] * len(stretches)
    for levels in _ranked(course, stretches, pacer, budget=budget, min_speed=min_speed)[:FIT_TRIES]:
        paced = pacer(on(levels), cut=False)
        if fits(paced):
            return paced, levels
    for _ in range(FIT_TRIES):
        options = level_options(course, stretches, paced.pacing.power)
        estimated = sum(float(options["battery"][level, k]) for k, level in enumerate(levels))
        drawn = battery_energy(motor, paced.ride.motor_power, paced.ride.time)
        levels = lower_within(options, levels, budget - max(drawn - estimated, 0.0), min_speed)
        paced = pacer(on(levels), cut=False)
        if fits(paced):
            return paced, levels
    return pacer(on(levels)), levels


def _ranked(
    course: Course, stretches: Sequence[Stretch], pacer: Pacer, *, budget: float, min_speed: float
) -> list[list[int]]:
    """Candidate levels whose steady plan draws within :data:`NEAR_BUDGET` of
    ``budget`` [J], best first (:func:`_judge`), built in :data:`ROUNDS` rounds, each
    from the best of the last (the levels move the rider's power)."""
    judged: dict[tuple[int, ...], _Judged] = {}
    start = [s.wanted for s in stretches]
    for _ in range(ROUNDS):
        for levels in _candidates(course, stretches, pacer, start, budget=budget, min_speed=min_speed):
            if tuple(levels) not in judged:
                ridden = dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, levels))
                judged[tuple(levels)] = _judge(ridden, pacer, min_speed)
        near = sorted((j.rank(), key) for key, j in judged.items() if j.battery <= budget * NEAR_BUDGET)
        if not near:
            return []
        start = list(near[0][1])
    return [list(key) for _, key in near]


@dataclass(frozen=True)
class _Judged:
    """A choice of levels planned on steady speeds: the rider's ``power`` [W] per
    segment, the ``walking`` [m], ``time`` [s] and ``battery`` [J] drawn."""

    power: np.ndarray
    walking: float
    time: float
    battery: float

    def rank(self) -> tuple[float, float]:
        """Walking least first, then quickest."""
        return self.walking, self.time


def _judge(course: Course, pacer: Pacer, min_speed: float) -> _Judged:
    """The steady plan of ``course`` (its levels set) and what it walks, takes and
    draws, its time taken to the day's mean power.

    Notes
    -----
    The programme's levels are coarse, so a steady plan's mean P̄ misses the day's
    P̄₀ by up to a few per cent (the ride is fitted later). Along the optimal plans
    the moving time T falls with the mean as dT/dP̄ = −T/(P̄ + κ) (the envelope
    theorem on T·(P̄ + κ) = min Σ t·(P + κ)), so the time is judged at
    T·(1 − (P̄₀ − P̄)/(P̄ + κ)).
    """
    plan = pacer.steady(course)
    speed, seconds, drawn = _steady(course, np.asarray(course.assist_ratio), plan.power)
    walking = float(np.sum(speed < min_speed)) * course.step
    time = float(np.sum(seconds))
    if np.isfinite(plan.kappa) and plan.mean_power + plan.kappa > 0:
        time *= 1.0 - (pacer.mean_power - plan.mean_power) / (plan.mean_power + plan.kappa)
    return _Judged(plan.power, walking, time, float(np.sum(drawn)))


#: Rounds of building candidates at the power of the best one judged so far.
ROUNDS = 2
#: Candidates are judged on steady speeds within this share of the budget; the ride
#: decides (it carries speed into climbs, which saves battery).
NEAR_BUDGET = 1.10


def _candidates(
    course: Course,
    stretches: Sequence[Stretch],
    pacer: Pacer,
    start: Sequence[int],
    *,
    budget: float,
    min_speed: float,
) -> list[list[int]]:
    """Levels near ``budget`` [J]: for each level between the climbs (up to the one
    asked for), the rider's power planned with it and the climbs at ``start``, and at
    that power the best climb levels within each of several budgets around the budget
    (:data:`SHARES`, :func:`best_levels`)."""
    wanted = [s.wanted for s in stretches]
    between = [len(stretches) - 1] if stretches and not stretches[-1].climb else []
    choices: list[list[int]] = []
    for level in range(wanted[-1] + 1) if between else [None]:
        lowest = [0] * len(stretches)
        top, first = list(wanted), list(start)
        if level is not None:
            lowest[-1] = top[-1] = first[-1] = level
        plan = pacer.steady(dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, first)))
        if np.isfinite(plan.kappa):
            options = priced_options(course, stretches, kappa=plan.kappa, top=pacer.top)
        else:
            options = level_options(course, stretches, plan.power)
        for share in SHARES:
            choices.append(
                best_levels(options, top, budget=budget * share, min_speed=min_speed, lowest=lowest)
            )
    return [list(c) for c in dict.fromkeys(tuple(c) for c in choices)]


#: Budgets the candidates are built for, as shares of the battery budget: the rider's
#: power moves with the levels, and the ride carries speed into climbs that the
#: steady estimate leaves out, so a choice a little over or under the budget at the
#: first plan's power may be the best at its own.
SHARES = (0.8, 0.9, 0.95, 1.0, 1.05, 1.1)
#: The multiple-choice knapsack counts battery in this many parts of the budget.
BATTERY_BINS = 400
#: Cost [s] of a stretch ridden below the walking speed: walking comes first.
WALKING_COST = 1e7


def best_levels(
    options: dict[str, np.ndarray],
    wanted: Sequence[int],
    *,
    budget: float,
    min_speed: float,
    lowest: Sequence[int] | None = None,
) -> list[int]:
    """One level per stretch, none above the one asked for (nor below ``lowest``), drawing at most
    ``budget`` [J], with the fewest stretches ridden below ``min_speed`` [m/s], then
    the least time: the multiple-choice knapsack solved exactly by dynamic programming
    over the battery spent.

    Parameters
    ----------
    options : :func:`level_options` (levels 0…N, stretches)
    wanted : the level each stretch asks for
    budget : float [J]
    min_speed : float [m/s]
    lowest : the lowest level of each stretch (0 when None)

    Notes
    -----
    The battery of each (stretch, level) is rounded up to :data:`BATTERY_BINS` parts
    of the budget, so every answer fits it; a stretch below the walking speed costs
    :data:`WALKING_COST` on top of its time.

    References
    ----------
    Sinha, P. & Zoltners, A. A. (1979). The multiple-choice knapsack problem.
    *Operations Research* 27(3):503–515 (from memory).
    """
    seconds, battery, slowest = options["time"], options["battery"], options["slowest"]
    unit = max(budget, 1e-9) / BATTERY_BINS
    bins = np.ceil(np.maximum(battery, 0.0) / unit - 1e-9).astype(np.int64)
    cost = options.get("cost", seconds) + WALKING_COST * (slowest < min_speed)
    value = np.zeros(BATTERY_BINS + 1)  # least cost with at most b bins spent
    picks = []
    for k, top in enumerate(wanted):
        new = np.full(BATTERY_BINS + 1, np.inf)
        pick = np.zeros(BATTERY_BINS + 1, dtype=np.int64)
        for level in range(0 if lowest is None else lowest[k], min(int(top), seconds.shape[0] - 1) + 1):
            b = int(bins[level, k])
            if b > BATTERY_BINS:
                continue
            trial = np.full(BATTERY_BINS + 1, np.inf)
            trial[b:] = value[: BATTERY_BINS + 1 - b] + cost[level, k]
            better = trial < new
            new[better], pick[better] = trial[better], level
        value = new
        picks.append(pick)
    if not np.isfinite(value).any():  # nothing fits: the lowest levels
        return [0 if lowest is None else int(lowest[k]) for k in range(len(wanted))]
    levels, left = [], int(np.argmin(value))
    for k in range(len(wanted) - 1, -1, -1):
        level = int(picks[k][left])
        levels.append(level)
        left -= int(bins[level, k])
    return levels[::-1]


def lower_within(
    options: dict[str, np.ndarray], levels: Sequence[int], budget: float, min_speed: float
) -> list[int]:
    """``levels`` lowered one step at a time until their draw fits ``budget`` [J]:
    first the steps that leave the rider riding, among them the one that loses least
    time per joule saved (a greedy knapsack run down; Dantzig 1957, from memory).

    Parameters
    ----------
    options : :func:`level_options` (levels 0…N, stretches)
    levels : one level per stretch
    budget : float [J]
    min_speed : float [m/s] the slowest a rider rides without walking
    """
    current = list(levels)
    battery, seconds, slowest = options["battery"], options["time"], options["slowest"]

    def spent() -> float:
        return float(sum(battery[level, k] for k, level in enumerate(current)))

    while spent() > budget:
        steps = []
        for k, level in enumerate(current):
            saved = battery[level, k] - battery[level - 1, k] if level > 0 else 0.0
            if saved <= 0:
                continue
            walks = bool(slowest[level - 1, k] < min_speed <= slowest[level, k])
            steps.append((walks, (seconds[level - 1, k] - seconds[level, k]) / saved, k))
        if not steps:
            break
        current[min(steps)[2]] -= 1
    return current
