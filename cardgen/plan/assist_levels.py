"""Assist levels chosen with the pacing plan, in one optimisation with the battery.

Each stretch (every climb, and the route between climbs) asks for a level: on a
climb the lowest that holds the rider's target speed within CP, between climbs the
rider's own ``assist_between_climbs``. When the planned ride with those levels draws
more than the battery budget (the usable battery less the reserve), the levels are
chosen against the budget, walking least first, then quickest: the candidates are
the levels asked for, ridden until their draw reaches the budget and then switched
off, and the best levels within the budget of an exact multiple-choice knapsack over
the stretches (:func:`best_levels`), for each level between the climbs; they are
screened on steady speeds, and the levels asked for and the screen's first two
are ridden, the best kept (:func:`pace_assisted`). So a level the battery cannot
carry the whole way is still ridden as far as the budget goes, and the plan says
where to switch it off; the reserve is never planned. Whatever the levels, once the
motor is off (or the battery empty) it gives nothing
(:func:`~cardgen.plan.pacing.pace`)."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from cardgen.physics.assist import assisted_speed, battery_energy, motor_power
from cardgen.plan.pacing import STALL_TIME, Course, PacedRide, Pacer, block_times
from cardgen.plan.walking import walking_mask


@dataclass(frozen=True)
class Stretch:
    """Where one assist level holds: ``segments`` (bool per segment), the level it
    asks for (``wanted``), and whether it is a climb or the route between climbs."""

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


def level_options(
    course: Course, stretches: Sequence[Stretch], power: np.ndarray, min_speed: float = 0.0
) -> dict[str, np.ndarray]:
    """What each level does on each stretch at the planned rider ``power`` [W] per
    segment (or per level and segment), on steady speeds capped by the braking
    envelope: arrays (levels 0…N, stretches) of ``time`` [s], ``battery`` [J] drawn,
    the rider's ``work`` [J] and the length ``walked`` [m] below ``min_speed`` [m/s];
    and per level and segment ``segment_time``, ``segment_battery``, ``segment_slow``
    (the length below ``min_speed``)."""
    ratios = _ratios(course)
    power = np.broadcast_to(power, (ratios.size, power.shape[-1]))
    speed, seconds, drawn = _steady(course, ratios, power)  # every segment at once
    slow = (speed < min_speed) * course.step
    work = seconds * power
    columns: dict[str, list[np.ndarray]] = {"time": [], "battery": [], "walked": [], "work": []}
    for stretch in stretches:
        i = stretch.segments
        columns["time"].append(seconds[:, i].sum(axis=1))
        columns["work"].append(work[:, i].sum(axis=1))
        columns["battery"].append(drawn[:, i].sum(axis=1))
        columns["walked"].append(slow[:, i].sum(axis=1))
    options = {key: np.column_stack(value) for key, value in columns.items()}
    # and per segment (levels 0…N, segments), for the screen of a switch-off (:func:`_screen`)
    options.update(segment_time=seconds, segment_battery=drawn, segment_slow=slow)
    return options


def priced_options(
    course: Course, stretches: Sequence[Stretch], *, kappa: float, top: float, min_speed: float = 0.0
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
    options = level_options(course, stretches, power, min_speed)
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
    the battery drawn kept within ``budget``: walking least first, then quickest.

    Parameters
    ----------
    course : Course with a motor (its ``assist_ratio`` is replaced)
    stretches : the climbs and the route between them
    pacer : the rider's pacing (:class:`~cardgen.plan.pacing.Pacer`)
    budget : float [J] battery to spend (the usable battery less the reserve)
    min_speed : float [m/s] the slowest the vehicle is ridden without walking

    Returns
    -------
    (PacedRide, levels): the plan ridden with the chosen levels, one level per
    stretch; its ``empty_at`` [m] is where the rider switches the motor off, having
    drawn the budget (None: the levels last the route within it).

    Notes
    -----
    The levels asked for are planned and ridden first; when their ride draws more
    than the budget, the candidates (:func:`_candidates`) are the levels asked for,
    and the best levels within the budget by an exact knapsack (:func:`best_levels`),
    each with every level between the climbs up to the one asked; each is ridden with
    the motor off from where its draw reaches the budget (none, for most knapsack
    choices), so every candidate keeps the reserve. They are screened on steady
    speeds at the priced power (:func:`_screen`); the levels asked for (whose plan
    ridden without the cut is the first round of their cut plan) and the screen's
    first :data:`RIDDEN` are planned with their switch-off point and ridden
    (:func:`~cardgen.plan.pacing.pace`), and judged on that ride (:func:`_judge`:
    metres walked by the rule of :mod:`cardgen.plan.walking`, then the moving time).
    """
    motor = course.motor
    if motor is None:
        raise ValueError("assist levels need a course with a motor")

    def on(levels: Sequence[int]) -> Course:
        return dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, levels))

    wanted = [s.wanted for s in stretches]
    paced = pacer(on(wanted), cut=False)
    if battery_energy(motor, paced.ride.motor_power, paced.ride.time) <= budget:
        return paced, wanted
    options = _options(course, stretches, paced, pacer.top, min_speed)
    screened = sorted(
        _candidates(stretches, options, budget=budget),
        key=lambda levels: _screen(stretches, options, levels, budget),
    )
    best: tuple[tuple[float, float], list[int], PacedRide] | None = None
    for levels in [wanted, *[c for c in screened if c != wanted][:RIDDEN]]:
        ridden = pacer(
            on(levels), capacity=budget, fitted=paced if levels == wanted else None, warm=paced.ride
        )
        rank = _judge(course.step, ridden, min_speed)
        if best is None or rank < best[0]:
            best = (rank, levels, ridden)
    assert best is not None
    return best[2], best[1]


def _options(
    course: Course, stretches: Sequence[Stretch], paced: PacedRide, top: float, min_speed: float
) -> dict[str, np.ndarray]:
    """What each level does on each stretch and segment at the rider's power of the
    levels asked (``paced``: its multiplier prices each level's time,
    :func:`priced_options`)."""
    kappa = paced.pacing.kappa
    if np.isfinite(kappa):
        return priced_options(course, stretches, kappa=kappa, top=top, min_speed=min_speed)
    return level_options(course, stretches, paced.pacing.power, min_speed)


#: Candidates ridden besides the levels asked for: the best of the screen (with one,
#: the cargo bike of the hilly budget test walks 240 m more: the screen's second
#: was the best ridden).
RIDDEN = 2


def _candidates(
    stretches: Sequence[Stretch], options: dict[str, np.ndarray], *, budget: float
) -> list[list[int]]:
    """For each level between the climbs up to the one asked: the climbs' levels
    capped at each level in turn, down to off (each to be ridden until the budget is
    spent), and the climbs' levels within ``budget`` [J] by :func:`best_levels`."""
    wanted = [s.wanted for s in stretches]
    between = bool(stretches) and not stretches[-1].climb
    choices = []
    for level in range(wanted[-1] + 1) if between else [None]:
        lowest = [0] * len(stretches)
        most = list(wanted)
        if level is not None:
            lowest[-1] = most[-1] = level
        # every climb at most at one level (the levels asked for among them), until
        # the budget is spent: a climb's assist for as long as it lasts
        climbs = most[: len(most) - between]
        for cap in range(max(climbs, default=0), -1, -1):
            choices.append([min(w, cap) for w in climbs] + most[len(climbs) :])
        choices.append(best_levels(options, most, budget=budget, lowest=lowest))
    return [list(c) for c in dict.fromkeys(tuple(c) for c in choices)]


def _screen(
    stretches: Sequence[Stretch], options: dict[str, np.ndarray], levels: Sequence[int], budget: float
) -> tuple[float, float]:
    """Metres walked and time [s] of ``levels`` on steady speeds at the options' power,
    the motor off from where their draw passes ``budget`` [J]: the cheap judge that
    picks the candidates to ride (walked metres to the nearest 10 m first)."""
    segments = np.zeros(options["segment_time"].shape[1], dtype=np.int64)
    for stretch, level in zip(stretches, levels, strict=True):
        segments[stretch.segments] = level
    at = np.arange(segments.size)
    on = np.cumsum(options["segment_battery"][segments, at]) <= budget
    given = np.where(on, segments, 0)
    walked = float(np.sum(options["segment_slow"][given, at]))
    return round(walked, -1), float(np.sum(options["segment_time"][given, at]))


def _judge(step: float, paced: PacedRide, min_speed: float) -> tuple[float, float]:
    """Metres walked (the rule of :mod:`cardgen.plan.walking`) and moving time [s] of
    a plan ridden."""
    ride = paced.ride
    walked = walking_mask(step, ride.time, ride.rider_power, ride.limited, min_speed)
    return float(np.sum(walked)) * step, float(ride.elapsed[-1])


#: The multiple-choice knapsack counts battery in this many parts of the budget.
BATTERY_BINS = 400
#: Cost of a metre ridden below the walking speed, in the units of the options' cost
#: (seconds, or the priced options' joules): walking comes first.
WALKING_COST = 1e7


def best_levels(
    options: dict[str, np.ndarray],
    wanted: Sequence[int],
    *,
    budget: float,
    lowest: Sequence[int] | None = None,
) -> list[int]:
    """One level per stretch, none above the one asked for (nor below ``lowest``), drawing at most
    ``budget`` [J], with the fewest metres walked (``options["walked"]``), then
    the least time: the multiple-choice knapsack solved exactly by dynamic programming
    over the battery spent.

    Parameters
    ----------
    options : :func:`level_options` (levels 0…N, stretches)
    wanted : the level each stretch asks for
    budget : float [J]
    lowest : the lowest level of each stretch (0 when None)

    Notes
    -----
    The battery of each (stretch, level) is rounded up to :data:`BATTERY_BINS` parts
    of the budget, so every answer fits it; every metre below the walking speed costs
    :data:`WALKING_COST` on top of the time.

    References
    ----------
    Sinha, P. & Zoltners, A. A. (1979). The multiple-choice knapsack problem.
    *Operations Research* 27(3):503–515 (from memory).
    """
    seconds, battery = options["time"], options["battery"]
    unit = max(budget, 1e-9) / BATTERY_BINS
    bins = np.ceil(np.maximum(battery, 0.0) / unit - 1e-9).astype(np.int64)
    cost = options.get("cost", seconds) + WALKING_COST * options["walked"]
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
