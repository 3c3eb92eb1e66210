"""What a plan holds: frozen data in SI units, no words and no rounding.

Notices carry a stable ``code``, a ``severity`` and the numbers they are about;
:mod:`cardgen.render.notices` turns them into sentences in the chosen units.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

import numpy as np

from cardgen.physics.assist import Motor
from cardgen.physics.ride import Ride, RideTimes
from cardgen.profiles.riders import Rider
from cardgen.route.checkpoints import Checkpoint
from cardgen.route.climbs import Climb, Descent
from cardgen.route.cues import Cue
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain
from cardgen.settings import Conditions

if TYPE_CHECKING:  # made from plans: their modules import this one
    from cardgen.plan.day import PointDay
    from cardgen.plan.event import CheckpointWindow
    from cardgen.plan.fuel import Leg


@dataclass(frozen=True)
class Notice:
    """Something a rider should know: ``code`` (stable, e.g. "walk", "curve"),
    ``severity`` ("info", "caution", "warning") and ``values``, (name, value) pairs
    in SI units (or text from the route for code "track"), and ``at`` [m], where it
    applies."""

    code: str
    severity: str
    values: tuple[tuple[str, float | str | None], ...] = ()
    at: float | None = None  # [m] from the start, where it applies (None: the whole route)

    def value(self, name: str, default: Any = None) -> Any:
        """The value called ``name``, or ``default``."""
        return dict(self.values).get(name, default)


@dataclass(frozen=True)
class ClimbRow:
    number: int
    climb: Climb
    power_for_target: float  # [W] rider's power to hold the target speed (with the suggested assist)
    speed_at_effort: float  # [m/s] average simulated speed
    time: float  # [s] simulated
    min_speed: float  # [m/s] slowest segment
    slow_length: float  # [m] below the two-wheel stable speed
    rider_power: float  # [W] time-averaged simulated rider power on the climb
    w_prime_low: float  # [J] lowest W′ balance on the climb
    sustainable_power: float | None  # [W] highest steady power that keeps W′ ≥ 0, where it runs out
    assist_level: int | None  # suggested level (0 = off); None without a motor
    assist_name: str | None
    warnings: tuple[Notice, ...]
    power_curve: tuple[np.ndarray, np.ndarray]  # ([m/s], [W]) power needed against speed on the average grade
    power_at_effort: float  # [W] on that curve at ``speed_at_effort``
    time_above_cp: float = 0.0  # [s] on the climb above the rider's CP: how hard it is for them
    w_prime_used: float = 0.0  # [J] of W′ spent on the climb (from its level at the foot)
    battery_left: float | None = None  # [J] usable battery left at the climb's top; None without a motor
    w_prime_top: float | None = None  # [J] W′ balance at the top
    recovered_after: float | None = None  # [m] from the top until W′ is mostly back; None: barely used
    rider_difficulty: tuple[str, ...] = ()  # words where the band understates the plan (plan/difficulty)


@dataclass(frozen=True)
class DescentRow:
    number: int
    descent: Descent
    coast_speed: float  # [m/s] steady coasting speed on the average grade
    max_speed: float  # [m/s] fastest simulated speed (after braking for limits)
    gravity_power: float  # [W] at the coasting speed; negative: gravity drives
    braking_energy: float  # [J] taken out by the brakes on the descent
    curve_distance: float  # [m] where the tightest curve is
    curve_speed: float  # [m/s] lateral-acceleration limit there (inf on a straight)
    warnings: tuple[Notice, ...]
    rider_power: float = 0.0  # [W] the plan's time-weighted mean rider power on the descent


@dataclass(frozen=True)
class TimedCue:
    cue: Cue
    elapsed: float  # [s] from the start


@dataclass(frozen=True)
class Totals:
    time: float  # [s] moving
    energy: float  # [J] rider's mechanical work
    food_energy: float  # [J] metabolic, at the vehicle's gross efficiency
    battery: float | None  # [J] drawn from the battery; None without a motor
    battery_fits: bool | None  # within the usable capacity less the reserve
    walk_length: float  # [m] two-wheeler below its stable speed


@dataclass(frozen=True)
class Effort:
    """The day's effort a plan rides at and how it is spread.

    ``style`` the pacing style ("best", "steady"); ``mean_power`` [W] the ride's
    time-weighted mean rider power; ``asked`` [W] the day's effort it was planned
    for; ``ceiling`` [W] the most the plan asks; ``given``: the effort is the rider's
    own setting (flat_w, flat_kmh, --power), else the default for the ride's length,
    ``duration`` [s] (the moving time that default assumed); ``battery_empty_at`` [m] where the motor stops
    for want of battery (None: it lasts or there is none); ``assist_off_at`` [m] where
    the plan has the rider switch the motor off, its battery less the reserve spent
    (None: the levels last the route within it, or there is no motor)."""

    style: str
    mean_power: float
    asked: float
    ceiling: float
    given: bool = True
    duration: float | None = None
    battery_empty_at: float | None = None
    assist_off_at: float | None = None


@dataclass(frozen=True)
class Analysis:
    """What a route is, whoever rides it: climbs, descents and cues."""

    track: Track
    terrain: Terrain
    climbs: tuple[Climb, ...]
    descents: tuple[Descent, ...]
    cues: tuple[Cue, ...]
    warnings: tuple[str, ...]


@dataclass(frozen=True)
class Plan:
    track: Track
    terrain: Terrain
    rider: Rider
    conditions: Conditions
    motor: Motor | None
    ride: Ride | RideTimes  # RideTimes once lightened for the pages
    w_prime_balance: np.ndarray  # [J] per segment
    climbs: tuple[ClimbRow, ...]
    descents: tuple[DescentRow, ...]
    cues: tuple[TimedCue, ...]
    totals: Totals
    warnings: tuple[Notice, ...]
    assist_between: int | None = None  # level between climbs (0 = off); None without a motor
    stops: tuple[tuple[float, float], ...] = ()  # (where [m], how long [s]) planned stops
    effort: Effort | None = None  # the day's effort and its pacing

    def lightened(self) -> Plan:
        """This plan with only the ride's times and rider power kept (what the pages,
        cards and exports use): for builds of hundreds of riders."""
        r = self.ride
        return dataclasses.replace(
            self, ride=RideTimes(r.elapsed, r.time, r.rider_power, r.passes, r.converged)
        )

    def elapsed_at(self, distance: float) -> float:
        """Time [s] from the start to arriving at ``distance`` [m]: riding, and every
        planned stop before it (a stop at that very place begins on arrival)."""
        return arrival_time(self.terrain.distance, self.ride.elapsed, self.stops, distance)

    @property
    def assist_off_at(self) -> float | None:
        """Where [m] the plan has the motor switched off to keep the battery's reserve
        (None: the battery lasts, or there is no motor): :attr:`Effort.assist_off_at`."""
        return self.effort.assist_off_at if self.effort is not None else None

    @property
    def finish_elapsed(self) -> float:
        """Time [s] from the start to the finish, stops included."""
        return self.elapsed_at(self.terrain.length)

    @property
    def stopped(self) -> float:
        """All planned stops before the finish [s]."""
        return stops_before(self.stops, self.terrain.length)


def stops_before(stops: Sequence[tuple[float, float]], distance: float) -> float:
    """The planned stops [s] strictly before ``distance`` [m] (a stop at that very
    place begins on arrival there)."""
    return float(sum(s for d, s in stops if d < distance - 1e-6))


def arrival_time(
    nodes: np.ndarray, elapsed: np.ndarray, stops: Sequence[tuple[float, float]], distance: float
) -> float:
    """Time [s] from the start to arriving at ``distance`` [m]: the ride's ``elapsed``
    at the grid ``nodes``, and every planned stop before it."""
    return float(np.interp(distance, nodes, elapsed)) + stops_before(stops, distance)


@dataclass(frozen=True)
class RouteJob:
    """One route's plans, as the renderer needs them: made by
    :func:`cardgen.plan.views.route_job`, which also fills in what the riders' plans
    give together (render computes none of it)."""

    slug: str
    name: str
    notes: str
    analysis: Analysis
    checkpoints: tuple[Checkpoint, ...]  # by distance
    riders: tuple[Entry, ...]  # in the configuration's order
    points: tuple[Checkpoint, ...] = ()  # feed and marshal points (kind "feed", "marshal"), by distance
    windows: tuple[CheckpointWindow, ...] = ()  # by distance; () unless every rider has a start
    together: tuple[dict[str, Any], ...] = ()  # the spread and regroup waits of riders who start together
    day: tuple[PointDay, ...] = ()  # per checkpoint, feed and marshal point: the day sheet; () without starts


@dataclass(frozen=True)
class Entry:
    """One rider on one route: name, start (None without an event time), the start
    wave's name, their plan and bib."""

    name: str
    start: datetime | None
    wave: str | None
    plan: Plan
    bib: int | None = None
    legs: tuple[Leg, ...] = ()  # between the checkpoints and to the finish
    fuel_rates: tuple[tuple[float, float], tuple[float, float]] | None = (
        None  # carbohydrate g/h, fluid L/h (low, high)
    )
