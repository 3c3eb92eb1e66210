"""Assist levels chosen with the pacing plan, in one optimisation with the battery.

Each stretch (every climb, and the route between climbs) asks for a level: on a
climb the lowest that holds the rider's target speed within CP, between climbs the
rider's own ``assist_between_climbs``. When the planned ride with those levels draws
more than the battery budget, the levels are chosen again at the rider's planned
power (:func:`~cardgen.physics.assist.choose_levels`): first those that keep the
rider off their feet, then the upgrades that save the most time per Wh, while the
budget lasts; the rider's power is planned again for the new levels, until the
levels settle. Whatever the levels, once the battery is empty the motor gives nothing
(:func:`~cardgen.plan.pacing.pace`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from cardgen.physics.assist import assisted_speed, battery_energy, choose_levels, motor_power
from cardgen.plan.pacing import STALL_TIME, Course, PacedRide
from cardgen.plan.walking import walking_mask

#: Rounds of choosing levels at the planned power and planning the power again …
ASSIST_ROUNDS = 1
#: … each planning and riding at most this many choices.
TRIES = 4
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


def level_options(course: Course, stretches: Sequence[Stretch], power: np.ndarray) -> dict[str, np.ndarray]:
    """What each level does on each stretch at the planned rider ``power`` [W] per
    segment, on steady speeds capped by the braking envelope: arrays (levels 0…N,
    stretches) of ``time`` [s], ``battery`` [J] drawn and ``slowest`` [m/s]."""
    motor = course.motor
    if motor is None:
        raise ValueError("assist levels need a course with a motor")
    ratios = np.array([0.0, *motor.levels])[:, None]
    columns: dict[str, list[np.ndarray]] = {"time": [], "battery": [], "slowest": []}
    for stretch in stretches:
        i = np.flatnonzero(stretch.segments)
        p = power[i]
        speed = assisted_speed(
            motor,
            ratios,
            p,
            resistance=course.resistance,
            grade=course.grade[i],
            air=course.air.over(i),
        )
        speed = np.minimum(np.nan_to_num(np.asarray(speed, dtype=float), nan=0.0), course.speed_limit[i])
        length = course.step * np.sqrt(1.0 + course.grade[i] ** 2)
        with np.errstate(divide="ignore"):
            seconds = np.minimum(np.where(speed > 0, length / speed, STALL_TIME), STALL_TIME)
        drawn = motor_power(motor, ratios, speed, p) * seconds / motor.drive_efficiency
        columns["time"].append(seconds.sum(axis=1))
        columns["battery"].append(np.nan_to_num(drawn, posinf=0.0).sum(axis=1))
        slowest = speed.min(axis=1) if stretch.climb else np.percentile(speed, BETWEEN_PERCENTILE, axis=1)
        columns["slowest"].append(slowest)
    return {key: np.column_stack(value) for key, value in columns.items()}


def pace_assisted(
    course: Course,
    stretches: Sequence[Stretch],
    pace: Callable[[Course], PacedRide],
    *,
    budget: float,
    min_speed: float,
) -> tuple[PacedRide, list[int]]:
    """The rider's pacing plan and the assist level of each stretch, chosen together.

    Parameters
    ----------
    course : Course with a motor (its ``assist_ratio`` is replaced)
    stretches : the climbs and the route between them
    pace : plans and rides the rider's power on a course (the rider's effort, style
        and W′ fixed)
    budget : float [J] battery to spend (the usable battery less the reserve)
    min_speed : float [m/s] the slowest the vehicle is ridden without walking

    Returns
    -------
    (PacedRide, levels): the plan ridden with the chosen levels, one level per stretch.
    """
    motor = course.motor
    if motor is None:
        raise ValueError("assist levels need a course with a motor")
    wanted = [s.wanted for s in stretches]
    levels = wanted
    paced = pace(dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, levels)))
    best = (_score(paced, course, min_speed), levels, paced)
    tried = {tuple(levels)}
    for _ in range(ASSIST_ROUNDS):
        if (
            paced.empty_at is None
            and battery_energy(motor, paced.ride.motor_power, paced.ride.time) <= budget
        ):
            break
        options = level_options(course, stretches, paced.pacing.power)
        starts = [
            choose_levels(options, wanted, min_speed=min_speed, budget=budget, overrun=overrun)
            for overrun in (True, False)
        ]
        estimate = _Estimate(course, stretches, paced.pacing.power, budget, min_speed)
        highest = [max(w, s) for w, s in zip(wanted, starts[1], strict=True)]
        choices = [estimate.improve(start, highest) for start in (*starts, levels)]
        choices.extend(move for c in [*starts, *choices] for move in _between_moves(c, stretches, highest))
        fresh = [list(c) for c in dict.fromkeys(tuple(c) for c in choices) if c not in tried][:TRIES]
        if not fresh:
            break
        # an upgrade run until the battery is empty starves the stretches after it,
        # and the rider's power moves with the levels (most where the level between
        # climbs changes): each choice is planned and ridden, and the plan that walks
        # least, then is quickest, is kept
        for choice in fresh:
            tried.add(tuple(choice))
            ridden = pace(dataclasses.replace(course, assist_ratio=assist_ratio(course, stretches, choice)))
            score = _score(ridden, course, min_speed)
            if score < best[0]:
                best = (score, choice, ridden)
        if best[1] == levels:
            break
        levels, paced = best[1], best[2]
    return best[2], best[1]


def _between_moves(
    levels: list[int], stretches: Sequence[Stretch], highest: Sequence[int]
) -> list[list[int]]:
    """``levels`` with the level between climbs one lower and one higher."""
    if not stretches or stretches[-1].climb:
        return []
    moves = []
    for step in (-1, 1):
        level = levels[-1] + step
        if 0 <= level <= highest[-1]:
            moves.append([*levels[:-1], level])
    return moves


class _Estimate:
    """Moving time and walking of a choice of levels at a fixed rider power, on steady
    speeds, the battery drawn in the order of the route and the motor off once the
    budget is spent: the cheap judge of :meth:`improve`."""

    def __init__(
        self, course: Course, stretches: Sequence[Stretch], power: np.ndarray, budget: float, min_speed: float
    ):
        if course.motor is None:
            raise ValueError("assist levels need a course with a motor")
        motor = course.motor
        self.owner = np.zeros(course.grade.size, dtype=np.int64)
        for k, stretch in enumerate(stretches):
            self.owner[stretch.segments] = k
        ratios = np.array([0.0, *motor.levels])[:, None]
        speed = assisted_speed(
            motor,
            ratios,
            power,
            resistance=course.resistance,
            grade=course.grade,
            air=course.air,
        )
        speed = np.minimum(np.nan_to_num(np.asarray(speed, dtype=float), nan=0.0), course.speed_limit)
        length = course.step * np.sqrt(1.0 + course.grade**2)
        with np.errstate(divide="ignore"):
            self.seconds = np.minimum(np.where(speed > 0, length / speed, STALL_TIME), STALL_TIME)
        drawn = motor_power(motor, ratios, speed, power) * self.seconds / motor.drive_efficiency
        self.drawn = np.nan_to_num(drawn, posinf=0.0)
        self.slow = (speed < min_speed) * course.step
        self.budget = budget
        self.columns = np.arange(course.grade.size)

    def score(self, levels: Sequence[int]) -> tuple[float, float]:
        """(walking [m], time [s]) of one level per stretch."""
        level = np.asarray(levels)[self.owner]
        on = np.cumsum(self.drawn[level, self.columns]) <= self.budget
        level = np.where(on, level, 0)
        return float(np.sum(self.slow[level, self.columns])), float(np.sum(self.seconds[level, self.columns]))

    def improve(self, levels: Sequence[int], highest: Sequence[int]) -> list[int]:
        """Levels from ``levels`` by moving one stretch one level at a time (never
        above ``highest``) while that walks less or, walking as much, is quicker."""
        current = list(levels)
        best = self.score(current)
        better = True
        while better:
            better = False
            for k in range(len(current)):
                for step in (-1, 1):
                    trial = current.copy()
                    trial[k] += step
                    if not 0 <= trial[k] <= highest[k]:
                        continue
                    score = self.score(trial)
                    if score < best:
                        current, best, better = trial, score, True
        return current


def _score(paced: PacedRide, course: Course, min_speed: float) -> tuple[float, float]:
    """What a plan is judged by: the length it walks [m], then its moving time [s]."""
    return _walked(paced, course, min_speed), float(paced.ride.elapsed[-1])


def _walked(paced: PacedRide, course: Course, min_speed: float) -> float:
    """Length [m] the ride walks (:func:`~cardgen.plan.walking.walking_mask`)."""
    ride = paced.ride
    return float(
        np.sum(walking_mask(course.step, ride.time, ride.rider_power, ride.limited, min_speed)) * course.step
    )
