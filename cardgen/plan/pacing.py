"""Pacing: the rider's power along a route that makes the ride shortest at the day's
mean power, with W′ never spent below zero.

The problem (de Jong et al. 2016; Wolf, Bertschinger & Saupe 2016): choose the power
P(s) along the route, 0 ≤ P ≤ a ceiling, that minimises the moving time T subject to
the time-weighted mean power ∫P dt / T being the day's effort P̄, and to the W′
balance of Skiba et al. (2015) staying ≥ 0. A Lagrange multiplier turns the mean
power into a price: minimise Σ tᵢ(Pᵢ)·(Pᵢ + κ), κ > 0 found by bisection so that
the mean power is P̄ (Swain 1997: at equal mean power, more power where the rider is
slow and less where fast is quicker). The W′ balance is the state of a dynamic
programme over blocks of the route (Bellman 1957). Times per block come from the
steady speed at each power (:func:`cardgen.physics.steady.steady_speed`, or the
assisted speed with a motor), capped by the braking envelope of every speed limit;
the result is ridden again by :func:`cardgen.physics.ride.simulate`, which has the
inertia the steady times leave out, and the day's mean is matched on that ride.

References
----------
Swain, D. P. (1997). A model for optimizing cycling performance by varying power on
hills and in wind. *Med. Sci. Sports Exerc.* 29(8):1104–1108.
Atkinson, G., Peacock, O. & Passfield, L. (2007). Variable versus constant power
strategies during cycling time-trials. *J. Sports Sci.* 25(9):1001–1009.
de Jong, J., Fokkink, R., Olsder, G. J. & Schwab, A. L. (2016). The individual time
trial as an optimal control problem. *Procedia Engineering* 147:907–912 (details
from memory).
Wolf, S., Bertschinger, R. & Saupe, D. (2016). Road cycling climbs made speedier by
personalized pacing strategies. *icSPORTS 2016* (from memory).
Skiba, P. F. et al. (2015). *Eur. J. Appl. Physiol.* 115(4):703–713 (W′ balance).
Bellman, R. (1957). *Dynamic Programming*. Princeton University Press.
"""

from __future__ import annotations

import dataclasses
import functools
import hashlib
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.physics.assist import Motor, assisted_speed
from cardgen.physics.effort import sustainable_power_omni, w_prime_balance
from cardgen.physics.forces import Air, Resistance
from cardgen.physics.ride import Ride, simulate, speed_limit_profile
from cardgen.physics.steady import steady_speed
from cardgen.profiles.riders import PACING_STYLES as RIDER_STYLES

#: Pacing styles: "best" spends W′ where it saves most time; "steady" never goes above
#: CP (for riders told by a coach or clinician to stay below it).
STYLES = RIDER_STYLES
#: Power levels the programme chooses from, 0 W and this many up to the ceiling.
POWER_LEVELS = 24
#: Lowest non-zero level, as a share of the ceiling.
LOWEST_LEVEL = 0.15
#: Levels of the W′ balance, from empty to full.
W_LEVELS = 31
#: A block of the route ends where the grade leaves its first segment's by more than
#: this [-], the headwind by more than BLOCK_WIND [m/s], or at BLOCK_LENGTH [m].
BLOCK_GRADE = 0.012
BLOCK_WIND = 1.5
BLOCK_LENGTH = 250.0
#: … but is never shorter than this [m] (the plan's finest step of power).
BLOCK_LEAST = 50.0
#: The ride's W′ balance may fall this far below zero [share of W′] (the steady
#: times of the programme against the ride's inertia) before it is planned again.
W_PRIME_SLACK = 0.01
#: W′ the programme keeps in hand [share of W′]: the ride's inertia moves the balance
#: a little from the programme's steady times.
W_FLOOR = 0.01
#: Stand-in for "infeasible" in the programme's values (finite keeps arithmetic clean).
INFEASIBLE = 1e15
#: Longest time [s] counted for one segment: a power too low to move on it.
STALL_TIME = 1e5
#: Multipliers tried in each round of the bisection, and rounds.
KAPPAS = 8
ROUNDS = 4
#: Multipliers of the dynamic programme's first range (worked out a few at a time, :func:`_closest`).
PROGRAMME_KAPPAS = 16
#: Asked again for a corrected mean, κ is sought within this factor of the last.
REFIT = 1.3
#: A stretch where W′ matters ends where the balance is back above this share of W′.
WINDOW_FULL = 0.98
#: With W′ binding, κ is sought between its value without W′ and this many times it.
WIDEN = 4.0
#: The programme runs only where W′ binds; where its plan makes W′ bind in more
#: places, it runs again with those added, at most this many times in all.
WINDOW_ROUNDS = 3
#: … seeking κ within this factor of the last, with this many multipliers.
WIDER = 1.15
WIDER_KAPPAS = 6


@dataclass(frozen=True)
class Course:
    """A route as one vehicle rides it: what pacing and the ride simulation need,
    shared by the vehicle's riders.

    Attributes
    ----------
    step : float [m]
    grade, headwind, air_density : arrays (n,) per segment [-], [m/s], [kg/m³]
    distance, speed_cap : arrays (n + 1,) per node [m], [m/s]
    deceleration : array (n,) [m/s²] braking before the caps
    resistance : Resistance
    motor : Motor or None, with ``assist_ratio`` (n,) per segment
    """

    step: float
    grade: np.ndarray
    headwind: np.ndarray
    air_density: np.ndarray
    distance: np.ndarray
    speed_cap: np.ndarray
    deceleration: np.ndarray
    resistance: Resistance
    motor: Motor | None = None
    assist_ratio: np.ndarray | None = None

    @property
    def air(self) -> Air:
        """The headwind and air density of every segment, as the physics takes them."""
        return Air(self.headwind, self.air_density)

    @functools.cached_property
    def speed_limit(self) -> np.ndarray:
        """The braking envelope's limit over each segment [m/s] (the lower end's)."""
        limit = speed_limit_profile(self.distance, self.speed_cap, self.deceleration)
        return np.asarray(np.minimum(limit[:-1], limit[1:]), dtype=float)

    def key(self) -> str:
        """A content hash of the course, its assist ratios left out: the key of the
        tables its riders share (they keep times per assist ratio)."""
        digest = hashlib.sha1(repr((self.step, self.resistance, self.motor)).encode())
        for array in (self.grade, self.headwind, self.air_density, self.speed_limit):
            digest.update(np.ascontiguousarray(array, dtype=float).tobytes())
        return digest.hexdigest()

    def ride(
        self, power: np.ndarray, assist_ratio: np.ndarray | None = None, warm: Ride | None = None
    ) -> Ride:
        """The ride at ``power`` [W] per segment (:func:`~cardgen.physics.ride.simulate`),
        started from the speeds of ``warm`` (a ride of nearly the same power) when given."""
        ratio = self.assist_ratio if assist_ratio is None else assist_ratio
        return simulate(
            step=self.step,
            grade=self.grade,
            air=self.air,
            resistance=self.resistance,
            rider_power=power,
            speed_cap=self.speed_cap,
            distance=self.distance,
            deceleration=self.deceleration,
            motor=self.motor,
            assist_ratio=0.0 if ratio is None else ratio,
            warm=None if warm is None else warm.speed,
        )

    def blocks(self) -> np.ndarray:
        """Start index of every block (the last entry is n): runs of segments of
        nearly the same grade and wind, :data:`BLOCK_LEAST` to :data:`BLOCK_LENGTH` long."""
        n = self.grade.size
        most = max(1, int(BLOCK_LENGTH / self.step))
        least = max(1, int(BLOCK_LEAST / self.step))
        starts = [0]
        first = 0
        for i in range(1, n):
            if i - first >= most or (
                i - first >= least
                and (
                    abs(self.grade[i] - self.grade[first]) > BLOCK_GRADE
                    or abs(self.headwind[i] - self.headwind[first]) > BLOCK_WIND
                )
            ):
                starts.append(i)
                first = i
        starts.append(n)
        return np.asarray(starts)

    def times(
        self,
        powers: np.ndarray,
        index: np.ndarray | None = None,
        ratio: float | np.ndarray | None = None,
        guess: np.ndarray | None = None,
    ) -> np.ndarray:
        """Time [s] on every segment (or the segments ``index``) at each steady power:
        array (levels, segments); with a motor at ``ratio`` [-] (one value or one per
        segment asked; the course's own when None). ``guess`` [m/s] per segment asked
        starts the speed iteration (the speeds at a nearby power: the same times, in
        fewer steps)."""
        return self.times_at(self.speeds(powers, index, ratio, guess), index)

    def speeds(
        self,
        powers: np.ndarray,
        index: np.ndarray | None = None,
        ratio: float | np.ndarray | None = None,
        guess: np.ndarray | None = None,
    ) -> np.ndarray:
        """Steady speed [m/s] on every segment (or the segments ``index``) at each
        power, before any speed limit (0 where none): array (levels, segments);
        ``ratio`` and ``guess`` as in :meth:`times`."""
        p = np.asarray(powers, dtype=float)[:, None]
        at = slice(None) if index is None else index
        road: dict[str, Any] = dict(resistance=self.resistance, grade=self.grade[at], air=self.air.over(at))
        if ratio is None and self.assist_ratio is not None:
            ratio = self.assist_ratio[at]
        if self.motor is not None and ratio is not None:
            speed = assisted_speed(self.motor, ratio, p, **road, guess=guess)
        else:
            speed = steady_speed(p, **road, rtol=1e-6, guess=guess)
        return np.asarray(np.nan_to_num(np.asarray(speed, dtype=float), nan=0.0), dtype=float)

    def times_at(self, speed: np.ndarray, index: np.ndarray | None = None) -> np.ndarray:
        """Time [s] on every segment (or the segments ``index``) at steady ``speed``
        [m/s] (levels, segments), capped by the braking envelope."""
        at = slice(None) if index is None else index
        speed = np.minimum(speed, self.speed_limit[at])
        length = self.step * np.sqrt(1.0 + self.grade[at] ** 2)
        with np.errstate(divide="ignore"):
            return np.minimum(np.where(speed > 0, length / speed, STALL_TIME), STALL_TIME)


@dataclass(frozen=True)
class Pacing:
    """A pacing plan: ``power`` [W] per segment, and what the programme expected of
    it (steady speeds, no inertia): ``time`` [s], ``mean_power`` [W], ``kappa`` [W]
    the price of time, and whether W′ was a binding limit (``w_prime_bound``)."""

    power: np.ndarray
    time: float
    mean_power: float
    kappa: float
    w_prime_bound: bool


def ceiling(style: str, cp: float, climb_share: float) -> float:
    """Highest power [W] of a style: CP for "steady", CP·(1 + climb share) for "best"."""
    if style not in STYLES:
        raise ValueError(f"unknown pacing style {style!r}: choose one of {', '.join(STYLES)}")
    return cp if style == "steady" else cp * (1.0 + climb_share)


def plan_pacing(
    course: Course,
    *,
    mean_power: float,
    cp: float,
    w_prime: float,
    top: float,
    table: Table | None = None,
    kappa_hint: float | None = None,
    floor: float = 0.0,
    tried: _Tried | None = None,
) -> Pacing:
    """Power on every segment that minimises the moving time at ``mean_power`` [W],
    between 0 and ``top`` [W], with the W′ balance (``cp`` [W], ``w_prime`` [J]) ≥ 0.

    Parameters
    ----------
    course : Course
    mean_power : float [W] the day's time-weighted mean power
    cp, w_prime : float [W], [J] the rider's critical power and W′
    top : float [W] the ceiling (see :func:`ceiling`)
    table : Table of this course and ceiling (:func:`block_times`), when at hand
    kappa_hint : float [W] or None: κ of an earlier plan at a nearby mean power
    floor : float [-] share of W′ kept in hand beyond :data:`W_FLOOR`
    tried : the plans of an earlier call for the same rider, course and ceiling (its
        programme's plans are taken when one is close enough; this call's are kept in it)

    Returns
    -------
    Pacing

    Notes
    -----
    With the mean power's multiplier, minimising T at mean P̄ is minimising
    Σ tᵢ(Pᵢ)·(Pᵢ + κ) for the κ that gives mean P̄ (module notes); the mean rises with
    κ, so κ is bisected on a log scale (:data:`KAPPAS` at once, :data:`ROUNDS` rounds).
    Without W′ the blocks are independent and each takes its cheapest level. Where
    that would spend more W′ than there is, the blocks of every stretch where W′ is
    below nearly full and falls to the floor (:func:`_windows`) are solved by dynamic
    programming over (block, W′ balance) on :data:`W_LEVELS` levels, the balance
    moving by the exact solution of the differential form for a constant power over
    the block's time (Skiba et al. 2015); stretches where W′ never binds keep their
    cheapest levels, and a stretch the programme's plan makes bind is added and the
    programme run again (:data:`WINDOW_ROUNDS`). Each block's times come from the
    course's shared grid of powers (:func:`block_times`).
    """
    table = table if table is not None else block_times(course, top)
    powers, times, starts = table.powers, table.times, table.starts
    if mean_power >= powers[-1]:
        index = np.full(times.shape[1], powers.size - 1)
        return _result(powers, times, index, starts, np.inf, False)
    # first the blocks alone, for every multiplier
    low, high = 1e-3 * mean_power, 1e3 * mean_power
    kappa, index = _bisect(lambda k: _independent(powers, times, k), powers, times, mean_power, low, high)
    chosen = times[index, np.arange(index.size)]
    balance = w_prime_balance(powers[index], chosen, cp, w_prime)
    keep = (W_FLOOR + floor) * w_prime
    if np.min(balance, initial=w_prime) >= keep:
        return _result(powers, times, index, starts, kappa, False)
    # W′ lowers the power on climbs, so the mean needs a higher price of time
    earlier = tried.closest(mean_power, keep) if tried is not None else None
    if earlier is not None:
        return _result(powers, times, earlier[1], starts, earlier[0], True)
    low, high = (kappa, kappa * WIDEN) if kappa_hint is None else (kappa_hint / REFIT, kappa_hint * REFIT)
    window = _windows(balance, w_prime, keep)
    count = PROGRAMME_KAPPAS
    start = 0 if kappa_hint is None else None  # from the lowest, else from the middle
    for _ in range(WINDOW_ROUNDS):
        programme = _programme(powers, times, cp, w_prime, window, keep)
        seen = _Tried()
        kappas = np.geomspace(low, high, count)
        kappa, index = _closest(programme.solve, powers, times, mean_power, kappas, start, seen)
        balance = w_prime_balance(powers[index], times[index, np.arange(index.size)], cp, w_prime)
        wider = window | _windows(balance, w_prime, keep)
        if np.array_equal(wider, window):
            break
        # more of the route where W′ binds moves κ only a little
        window, low, high, count, start = wider, kappa / WIDER, kappa * WIDER, WIDER_KAPPAS, None
    if tried is not None:
        seen.keep = keep
        tried.__dict__.update(seen.__dict__)
    return _result(powers, times, index, starts, kappa, True)


def _windows(balance: np.ndarray, w_prime: float, keep: float) -> np.ndarray:
    """Blocks where W′ binds: every run of blocks whose balance is below
    :data:`WINDOW_FULL` of W′ (so each starts with W′ nearly full) and falls below
    ``keep`` [J] somewhere in it. Returns a bool array over blocks."""
    inside = balance < WINDOW_FULL * w_prime
    if not inside.any():
        return inside
    starts = np.flatnonzero(inside & ~np.concatenate(([False], inside[:-1])))
    run = np.cumsum(np.isin(np.arange(inside.size), starts)) - 1  # run number of every block
    lowest = np.minimum.reduceat(np.where(inside, balance, np.inf), starts)
    return np.asarray(inside & (run >= 0) & (lowest[np.maximum(run, 0)] < keep))


_last: dict[str, tuple[tuple[object, ...], _Programme]] = {}


def _programme(
    powers: np.ndarray, times: np.ndarray, cp: float, w_prime: float, window: np.ndarray, keep: float
) -> _Programme:
    """The programme for these windows, kept for the next call with the same ones
    (the ride's mean is matched by asking again with a corrected mean)."""
    key = (id(times), times.shape, float(cp), float(w_prime), float(keep), window.tobytes())
    if "last" in _last and _last["last"][0] == key:
        return _last["last"][1]
    programme = _Programme(powers, times, cp, w_prime, window, keep)
    _last["last"] = (key, programme)
    return programme


@dataclass(frozen=True)
class Table:
    """The power levels [W] of one ceiling (0 and :data:`POWER_LEVELS` up to it),
    the time [s] of every block at each, array (levels, blocks), and the blocks'
    start indices (:meth:`Course.blocks`)."""

    powers: np.ndarray
    times: np.ndarray
    starts: np.ndarray


#: Block times are worked out on a grid of powers shared by every rider of a vehicle
#: on a route, geometric from GRID_LOW [W] in steps of GRID_RATIO; a rider's levels
#: are interpolated between grid points in log–log, exact where the time goes as a
#: power of P (t ∝ 1/P on a steep climb, t ∝ P^(-1/3) where drag dominates) and
#: within a few parts in 10,000 between.
GRID_LOW = 1.0
GRID_RATIO = 1.08


class _Grid:
    """The blocks of a course and their times on the shared power grid, grown as
    riders ask for new powers (the values of a grid point never depend on who asked).
    With a motor, times are kept per assist ratio: a block under one ratio takes them
    from the grid of that ratio, a block whose ratio changes inside it (a stretch's
    end, where the battery runs out) is worked out segment by segment at the powers
    asked, so a new choice of levels or a new battery cut costs no new grid."""

    def __init__(self, course: Course):
        self.starts = course.blocks()
        self.columns: dict[float, dict[int, np.ndarray]] = {}
        # no power, no assist: the same at every ratio
        self.zero = self._log_times(course, np.zeros(1), 0.0)[0]

    def _log_times(self, course: Course, powers: np.ndarray, ratio: float) -> np.ndarray:
        return np.log(np.add.reduceat(course.times(powers, ratio=ratio), self.starts[:-1], axis=1))

    def times(self, course: Course, powers: np.ndarray) -> np.ndarray:
        """Block times [s] at ``powers`` [W] (> 0): array (levels, blocks)."""
        x = np.log(powers / GRID_LOW) / np.log(GRID_RATIO)
        if course.motor is None or course.assist_ratio is None:
            return self._on_grid(course, x, 0.0)
        ratio = course.assist_ratio
        first = ratio[self.starts[:-1]]
        uniform = np.maximum.reduceat(ratio, self.starts[:-1]) == np.minimum.reduceat(ratio, self.starts[:-1])
        out = np.empty((powers.size, first.size))
        for value in np.unique(first[uniform]):
            on = uniform & (first == value)
            out[:, on] = self._on_grid(course, x, float(value))[:, on]
        mixed = np.flatnonzero(~uniform)
        if mixed.size:
            index = np.concatenate([np.arange(self.starts[b], self.starts[b + 1]) for b in mixed])
            lengths = self.starts[mixed + 1] - self.starts[mixed]
            local = np.concatenate(([0], np.cumsum(lengths)[:-1]))
            out[:, mixed] = np.add.reduceat(course.times(powers, index=index), local, axis=1)
        return out

    def _on_grid(self, course: Course, x: np.ndarray, ratio: float) -> np.ndarray:
        """Block times at the grid positions ``x``, interpolated in log–log."""
        low = np.floor(x).astype(np.int64)
        columns = self.columns.setdefault(ratio, {})
        missing = sorted({int(k) for k in np.concatenate((low, low + 1))} - columns.keys())
        if missing:
            columns.update(self._columns(course, missing, ratio, columns))
        below = np.stack([columns[int(k)] for k in low])
        above = np.stack([columns[int(k) + 1] for k in low])
        share = (x - low)[:, None]
        return np.asarray(np.exp(below + share * (above - below)))

    def _columns(
        self, course: Course, missing: list[int], ratio: float, columns: dict[int, np.ndarray]
    ) -> dict[int, np.ndarray]:
        """Log block times of the grid points ``missing`` (ascending), one at a time:
        each speed iteration starts from the speeds of the point before it (the first
        from the block speeds of the nearest point already worked out, scaled as P^⅓),
        which takes a sixth of the steps of a start from nothing, to the same times."""
        out: dict[int, np.ndarray] = {}
        lengths = np.add.reduceat(course.step * np.sqrt(1.0 + course.grade**2), self.starts[:-1])
        guess, at = None, None
        if columns:
            at = min(columns, key=lambda k: abs(k - missing[0]))
            guess = np.repeat(lengths / np.exp(columns[at]), np.diff(self.starts))
        for k in missing:
            if guess is not None and at is not None:
                guess = guess * GRID_RATIO ** ((k - at) / 3.0)
            power = GRID_LOW * GRID_RATIO ** np.asarray([k], dtype=float)  # as the grid's other uses
            speed = course.speeds(power, ratio=ratio, guess=guess)
            out[k] = np.log(np.add.reduceat(course.times_at(speed), self.starts[:-1], axis=1))[0]
            guess, at = speed[0], k
        return out


#: Grids of block times kept for riders of one vehicle on one route (keyed by content).
TABLE_CACHE = 32
_grids: OrderedDict[str, _Grid] = OrderedDict()


def block_times(course: Course, top: float) -> Table:
    """The :class:`Table` of ``course`` for the ceiling ``top`` [W], from the grid the
    course's riders share."""
    key = course.key()
    grid = _grids.get(key)
    if grid is None:
        grid = _grids[key] = _Grid(course)
        while len(_grids) > TABLE_CACHE:
            _grids.popitem(last=False)
    else:
        _grids.move_to_end(key)
    powers = np.concatenate(([0.0], np.linspace(LOWEST_LEVEL * top, top, POWER_LEVELS)))
    times = np.vstack((np.exp(grid.zero)[None, :], grid.times(course, powers[1:])))
    return Table(powers, times, grid.starts)


def _result(
    powers: np.ndarray, times: np.ndarray, index: np.ndarray, starts: np.ndarray, kappa: float, bound: bool
) -> Pacing:
    chosen = times[index, np.arange(index.size)]
    total = float(np.sum(chosen))
    power = np.repeat(powers[index], np.diff(starts))
    return Pacing(power, total, float(np.sum(powers[index] * chosen) / total), float(kappa), bound)


def _independent(powers: np.ndarray, times: np.ndarray, kappas: np.ndarray) -> np.ndarray:
    """Each block's cheapest level for each multiplier: array (kappas, blocks)."""
    cost = times[None, :, :] * (powers[None, :, None] + kappas[:, None, None])
    return np.asarray(np.argmin(cost, axis=1))


def _mean(powers: np.ndarray, times: np.ndarray, index: np.ndarray) -> np.ndarray:
    """Time-weighted mean power of each row of chosen levels (kappas, blocks)."""
    chosen = times[index, np.arange(index.shape[1])[None, :]]
    return np.asarray(np.sum(powers[index] * chosen, axis=1) / np.sum(chosen, axis=1))


def _bisect(
    solve: Callable[[np.ndarray], np.ndarray],
    powers: np.ndarray,
    times: np.ndarray,
    target: float,
    low: float,
    high: float,
    rounds: int = ROUNDS,
    count: int = KAPPAS,
    tried: _Tried | None = None,
) -> tuple[float, np.ndarray]:
    """κ on a log scale between ``low`` and ``high`` whose plan's mean power is
    closest to ``target``; ``solve`` maps an array of κ to their plans. Each round
    tries ``count`` values and narrows to the two around the target. Every plan
    tried is added to ``tried`` when given."""
    closest: tuple[float, float, np.ndarray] | None = None
    for _ in range(rounds):
        kappas = np.geomspace(low, high, count)
        plans = solve(kappas)
        means = _mean(powers, times, plans)
        if tried is not None:
            tried.add(kappas, plans, means)
        k = int(np.argmin(np.abs(means - target)))
        if closest is None or abs(means[k] - target) < closest[0]:
            closest = (abs(float(means[k]) - target), float(kappas[k]), plans[k])
        below = np.flatnonzero(means <= target)
        if below.size == 0 or below[-1] == count - 1:
            break
        low, high = kappas[below[-1]], kappas[below[-1] + 1]
    assert closest is not None
    return closest[1], closest[2]


#: The programme works out its plans a few multipliers at a time (one pass over the
#: route for each few), from the lowest of the first round's (where W′ binds, the
#: closest mean was among the lowest four of sixteen for every rider of the
#: benchmark's event), else from the middle of the range.
FIRST_KAPPAS = 4
MORE_KAPPAS = 2


def _closest(
    solve: Callable[[np.ndarray], np.ndarray],
    powers: np.ndarray,
    times: np.ndarray,
    target: float,
    kappas: np.ndarray,
    start: int | None,
    tried: _Tried,
) -> tuple[float, np.ndarray]:
    """The multiplier of ``kappas`` (ascending) whose plan's mean power [W] is
    closest to ``target``, and its plan; every plan worked out is added to ``tried``.

    Notes
    -----
    The mean rises with κ (a higher price of time buys more speed with more power),
    so the closest lies next to where the means cross the target: plans are worked
    out from ``start`` (the middle when None), :data:`FIRST_KAPPAS` then
    :data:`MORE_KAPPAS` at a time, towards the crossing until it is bracketed. A
    plan's row does not depend on the others solved with it, so the choice is the
    one all of ``kappas`` at once would give.
    """
    n = kappas.size
    width = FIRST_KAPPAS if start == 0 else MORE_KAPPAS
    lo = max(0, (n - width) // 2) if start is None else start
    hi = min(n, lo + width)
    means = np.full(n, np.nan)
    plans: list[np.ndarray] = [np.empty(0, dtype=np.int64)] * n

    def work(a: int, b: int) -> None:
        rows = solve(kappas[a:b])
        means[a:b] = _mean(powers, times, rows)
        plans[a:b] = list(rows)
        tried.add(kappas[a:b], rows, means[a:b])

    work(lo, hi)
    while True:
        if lo > 0 and means[lo] > target:
            lo, was = max(0, lo - MORE_KAPPAS), lo
            work(lo, was)
        elif hi < n and means[hi - 1] < target:
            hi, was = min(n, hi + MORE_KAPPAS), hi
            work(was, hi)
        else:
            break
    k = lo + int(np.argmin(np.abs(means[lo:hi] - target)))
    return float(kappas[k]), plans[k]


class _Tried:
    """The plans a rider's programme has worked out, by κ [W] and mean power [W]: asked
    again for a corrected mean (the ride's inertia moves it a little), the closest of
    them is taken when it is within :data:`PICK` of the new mean."""

    def __init__(self) -> None:
        self.keep = np.nan
        self.kappas = np.empty(0)
        self.means = np.empty(0)
        self.plans: list[np.ndarray] = []

    def add(self, kappas: np.ndarray, plans: np.ndarray, means: np.ndarray) -> None:
        self.kappas = np.concatenate((self.kappas, kappas))
        self.means = np.concatenate((self.means, means))
        self.plans.extend(plans)

    def closest(self, target: float, keep: float) -> tuple[float, np.ndarray] | None:
        """κ and levels of the plan nearest ``target`` [W], kept ``keep`` [J] of W′ in
        hand like the one asked, and within :data:`PICK`; else None."""
        if keep != self.keep or not self.plans:
            return None
        k = int(np.argmin(np.abs(self.means - target)))
        if abs(self.means[k] - target) > PICK * target:
            return None
        return float(self.kappas[k]), self.plans[k]


class _Programme:
    """The dynamic programme over (block, W′ balance) for many multipliers at once,
    on the blocks of ``window`` (bool over blocks); the others take their cheapest
    level alone. W′ is taken as full where a run of window blocks starts.

    The transitions depend only on the course, the levels and the rider, so they are
    worked out once and every multiplier reuses them."""

    def __init__(
        self,
        powers: np.ndarray,
        times: np.ndarray,
        cp: float,
        w_prime: float,
        window: np.ndarray,
        keep: float,
    ):
        self.powers, self.all_times = powers, times
        self.inside = np.flatnonzero(window)
        self.times = times[:, self.inside].T  # (window blocks, levels)
        # a run starts where the block before is not in the window
        self.resets = np.concatenate(([True], np.diff(self.inside) > 1))
        grid = np.linspace(0.0, w_prime, W_LEVELS)
        above = powers >= cp
        spend = (powers - cp)[None, :] * self.times
        decay = np.exp(-np.maximum(cp - powers, 0.0)[None, :] * self.times / w_prime)
        after = np.where(
            above[None, None, :],
            grid[None, :, None] - spend[:, None, :],
            w_prime - (w_prime - grid[None, :, None]) * decay[:, None, :],
        )  # (blocks, W levels, power levels)
        self.floor = keep
        self.feasible = after >= self.floor
        position = np.clip(after, 0.0, w_prime) / w_prime * (W_LEVELS - 1)
        self.cell = np.minimum(position.astype(np.int64), W_LEVELS - 2)
        self.frac = position - self.cell
        # the backward pass's per-block constants, worked out once for every multiplier
        # and every call (the same arithmetic as inline, so the same values bit for bit)
        self.next_cell = self.cell + 1
        self.keep_share = 1.0 - self.frac
        self.infeasible = ~self.feasible
        self.spend, self.decay, self.above = spend, decay, above
        self.w_prime = w_prime

    def solve(self, kappas: np.ndarray) -> np.ndarray:
        """Chosen level in every block for each multiplier: array (kappas, blocks)."""
        chosen = _independent(self.powers, self.all_times, kappas)
        cost = self.times[None, :, :] * (self.powers[None, None, :] + kappas[:, None, None])
        value = self._backward(cost)
        chosen[:, self.inside] = self._forward(cost, value)
        return chosen

    def _backward(self, cost: np.ndarray) -> np.ndarray:
        """Least cost from each window block on, by W′ level: (blocks + 1, m, W)."""
        blocks = self.times.shape[0]
        value = np.zeros((blocks + 1, cost.shape[0], W_LEVELS))
        for b in range(blocks - 1, -1, -1):
            ahead = value[b + 1]
            if b + 1 < blocks and self.resets[b + 1]:  # a new run starts with W′ full
                ahead = np.repeat(ahead[:, -1:], W_LEVELS, axis=1)
            # ahead[cell]·(1 − frac) + ahead[cell + 1]·frac, (m, W, levels), in place:
            # the pass is bound by arithmetic on these arrays, not by the loop
            total = np.take(ahead, self.cell[b], axis=1)
            upper = np.take(ahead, self.next_cell[b], axis=1)
            total *= self.keep_share[b]
            upper *= self.frac[b]
            total += upper
            np.copyto(total, INFEASIBLE, where=self.infeasible[b])
            total += cost[:, b, None, :]
            np.min(total, axis=2, out=value[b])
        return value

    def _forward(self, cost: np.ndarray, value: np.ndarray) -> np.ndarray:
        """The exact balance along each window run and the best level against the
        values ahead: (m, window blocks)."""
        blocks = self.times.shape[0]
        m = cost.shape[0]
        rows = np.arange(m)
        base = rows[:, None] * W_LEVELS  # row offsets into a flattened (m, W) array
        chosen = np.empty((m, blocks), dtype=np.int64)
        w = np.full(m, self.w_prime)
        for b in range(blocks):
            if self.resets[b]:
                w = np.full(m, self.w_prime)
            after = np.where(
                self.above[None, :],
                w[:, None] - self.spend[b][None, :],
                self.w_prime - (self.w_prime - w[:, None]) * self.decay[b][None, :],
            )
            position = np.clip(after, 0.0, self.w_prime)
            position /= self.w_prime
            position *= W_LEVELS - 1
            cell = np.minimum(position.astype(np.int64), W_LEVELS - 2)
            frac = position - cell
            ahead = value[b + 1]
            if b + 1 < blocks and self.resets[b + 1]:
                ahead = np.repeat(ahead[:, -1:], W_LEVELS, axis=1)
            # ahead[cell]·(1 − frac) + ahead[cell + 1]·frac, gathered from the flat array
            # (the pass is bound by its many small operations per block)
            flat = ahead.ravel()
            cell += base
            total = flat.take(cell)
            total *= 1.0 - frac
            cell += 1
            upper = flat.take(cell)
            upper *= frac
            total += upper
            total[after < self.floor] = INFEASIBLE
            total += cost[:, b, :]
            k = total.argmin(axis=1)
            chosen[:, b] = k
            w = np.maximum(after[rows, k], 0.0)
        return chosen


#: The ridden mean power may miss the day's effort by this share before the
#: programme is asked again with the miss corrected …
MEAN_TOLERANCE = 0.01
#: … at most this many times.
FIT_ROUNDS = 2
#: Asked again, a plan already worked out is taken when its mean is within this share
#: of the new one (the programme's κ are 10 % apart, its means about 1.5 %).
PICK = 0.006
#: Rounds of cutting the motor where the battery runs out (each only cuts earlier).
BATTERY_ROUNDS = 4
#: The motor is cut where the draw reaches this share below the capacity [-].
CUT_MARGIN = 1e-4
#: The plan is made again for its cut until the cut moves less than this [m] (after
#: the first re-plan it moves tens of metres, a few kilometres before).
CUT_SETTLE = 250.0


@dataclass(frozen=True)
class PacedRide:
    """A pacing plan ridden: ``pacing``, the simulated ``ride``, the ``assist_ratio``
    per segment actually given (0 once the battery is empty) and ``empty_at`` [m],
    where the battery runs out (None: it lasts)."""

    pacing: Pacing
    ride: Ride
    assist_ratio: np.ndarray | None
    empty_at: float | None


@dataclass(frozen=True)
class Pacer:
    """One rider's pacing on any course: the day's ``mean_power`` [W], ``cp`` [W],
    ``w_prime`` [J] and the ceiling ``top`` [W]."""

    mean_power: float
    cp: float
    w_prime: float
    top: float

    def __call__(
        self,
        course: Course,
        *,
        cut: bool = True,
        capacity: float | None = None,
        fitted: PacedRide | None = None,
        warm: Ride | None = None,
    ) -> PacedRide:
        """The plan ridden (:func:`pace`)."""
        return pace(
            course,
            mean_power=self.mean_power,
            cp=self.cp,
            w_prime=self.w_prime,
            top=self.top,
            cut=cut,
            capacity=capacity,
            fitted=fitted,
            warm=warm,
        )

    def steady(self, course: Course) -> Pacing:
        """The plan on steady speeds, not ridden (:func:`plan_pacing`): the cheap
        judge of a change to the course, such as other assist levels."""
        return plan_pacing(course, mean_power=self.mean_power, cp=self.cp, w_prime=self.w_prime, top=self.top)


def ridden_mean(ride: Ride) -> float:
    """Time-weighted mean rider power [W] of a ride (stalled segments left out)."""
    finite = np.isfinite(ride.time)
    total = float(np.sum(ride.time[finite]))
    return float(np.sum(ride.rider_power[finite] * ride.time[finite]) / total) if total > 0 else 0.0


def pace(
    course: Course,
    *,
    mean_power: float,
    cp: float,
    w_prime: float,
    top: float,
    cut: bool = True,
    capacity: float | None = None,
    fitted: PacedRide | None = None,
    warm: Ride | None = None,
) -> PacedRide:
    """Plan the power (:func:`plan_pacing`) and ride it, at ``mean_power`` [W] as
    ridden; with a motor, the motor gives nothing once the battery is empty, or once
    it has given ``capacity`` [J] when that is set (the battery less a reserve: the
    rider switches it off there). Without ``cut`` the motor runs the whole way: the
    ride of levels meant to fit the battery, which its caller checks, at the cost of
    one plan. ``fitted`` is this rider's plan of this course already ridden without
    ``cut`` (the same arguments): its plan and ride are the first round's, not
    worked out again. ``warm`` is the ride of a nearby plan (other assist levels,
    say): the first ride's passes start from its speeds (the same ride to the
    simulation's tolerance, in fewer passes).

    Notes
    -----
    The programme works with steady speeds; the ride has inertia, so its mean power
    differs a little. The programme is asked again for the mean scaled by the miss
    (at most :data:`FIT_ROUNDS` times). With a motor, the ride's battery draw is
    summed along the route; where it passes the capacity the assist ratio is cut (pro
    rata on that segment, to 0 after it) and the rider's power planned and ridden
    again for that cut, until the cut moves less than :data:`CUT_SETTLE` (at most
    :data:`BATTERY_ROUNDS` plans); the last plan is ridden with its own cut, cut again
    if that ride still passes the capacity.
    """
    full = course.assist_ratio
    ratio, empty_at = full, None
    for _ in range(BATTERY_ROUNDS):
        ridden = course if ratio is full else dataclasses.replace(course, assist_ratio=ratio)
        if fitted is not None and ratio is full:
            pacing, ride = fitted.pacing, fitted.ride
        else:
            pacing, ride = _fit(ridden, mean_power, cp, w_prime, top, warm=warm if ratio is full else ride)
        if course.motor is None or full is None or not cut:
            return PacedRide(pacing, ride, ratio, empty_at)
        # the draw up to any point does not depend on the motor after it: where this
        # power spends the capacity, on its own ride when before the last cut, else
        # with the motor on throughout
        emptied = battery_cut(ride, ratio if ratio is not None else full, course.motor, capacity)
        if emptied is None and ratio is not full:
            unbounded = course.ride(pacing.power, full)
            emptied = battery_cut(unbounded, full, course.motor, capacity)
            if emptied is None:
                return PacedRide(pacing, unbounded, full, None)
        if emptied is None:
            return PacedRide(pacing, ride, full, None)
        index, ratio = emptied
        where = float(course.distance[index + 1])
        settled = empty_at is not None and abs(empty_at - where) <= CUT_SETTLE
        empty_at = where
        if settled:
            break
    motor = course.motor
    assert ratio is not None and motor is not None
    ride = course.ride(pacing.power, ratio, warm=ride)
    for _ in range(BATTERY_ROUNDS):  # the ride cut there may still pass it, a little
        again = battery_cut(ride, ratio, motor, capacity)
        if again is None:
            break
        index, ratio = min(index, again[0]), again[1]
        empty_at = float(course.distance[index + 1])
        ride = course.ride(pacing.power, ratio, warm=ride)
    return PacedRide(pacing, ride, ratio, empty_at)


def battery_cut(
    ride: Ride, ratio: np.ndarray, motor: Motor, capacity: float | None = None
) -> tuple[int, np.ndarray] | None:
    """Where the ride has drawn ``capacity`` [J] (the usable battery when None): the
    segment, and the assist ratio cut there (pro rata on that segment, 0 after it);
    None when the battery lasts."""
    capacity = motor.usable_battery if capacity is None else capacity
    energy = np.nan_to_num(ride.motor_power * ride.time, posinf=0.0) / motor.drive_efficiency
    drawn = np.cumsum(energy)
    over = np.flatnonzero(drawn > capacity * (1.0 + 1e-6))
    if not over.size:
        return None
    i = int(over[0])
    # a hair inside: the ride cut here draws a little differently on its last segment
    left = capacity * (1.0 - CUT_MARGIN) - (drawn[i - 1] if i else 0.0)
    cut = ratio.copy()
    cut[i] *= max(left, 0.0) / max(energy[i], 1e-9)
    cut[i + 1 :] = 0.0
    return i, cut


def _fit(
    course: Course, mean_power: float, cp: float, w_prime: float, top: float, warm: Ride | None = None
) -> tuple[Pacing, Ride]:
    """The pacing plan and its ride whose ridden mean power is ``mean_power``;
    ``warm``, a ride of a nearby plan, starts the first ride's passes."""
    table = block_times(course, top)
    asked = mean_power
    hint = None
    floor = 0.0
    tried = _Tried()
    for _ in range(FIT_ROUNDS + 1):
        pacing = plan_pacing(
            course,
            mean_power=asked,
            cp=cp,
            w_prime=w_prime,
            top=top,
            table=table,
            kappa_hint=hint,
            floor=floor,
            tried=tried,
        )
        hint = pacing.kappa if np.isfinite(pacing.kappa) else None
        ride = course.ride(pacing.power, warm=warm)
        warm = ride  # the next round's plan is near this one
        ridden = ridden_mean(ride)
        low = float(np.min(w_prime_balance(ride.rider_power, ride.time, cp, w_prime), initial=w_prime))
        short = low < -W_PRIME_SLACK * w_prime
        if ridden <= 0 or not short:
            break
        # the ride's inertia spent more than the programme planned: keep more
        floor += -low / w_prime + W_FLOOR
        asked = min(asked * mean_power / ridden, top)
    if ridden > 0 and not short and abs(ridden - mean_power) > MEAN_TOLERANCE * mean_power:
        return _trim(course, pacing, ride, mean_power, cp, w_prime, top)
    return pacing, ride


def _trim(
    course: Course, pacing: Pacing, ride: Ride, mean_power: float, cp: float, w_prime: float, top: float
) -> tuple[Pacing, Ride]:
    """The plan with its power below CP scaled so that the ride's mean is
    ``mean_power`` [W], when the programme's levels could not come within
    :data:`MEAN_TOLERANCE` of it (their steps are coarse on a short course); a scaled
    plan is kept only when its ride is nearer the mean and W′ holds.

    Notes
    -----
    Scaling the power P on the segments below CP by s moves the mean by about
    (s − 1)·Σ P t / Σ t (times held), the first guess; the times move too (with a
    motor, most), so the second is the secant through the first's ride (at most
    :data:`TRIM_ROUNDS` rides). The scaled power stays below CP and the ceiling ``top`` [W].
    """
    seconds = np.where(np.isfinite(ride.time), ride.time, 0.0)
    below = (pacing.power > 0) & (pacing.power < cp)
    work = float(np.sum(pacing.power[below] * seconds[below]))
    if work <= 0:
        return pacing, ride
    best = (abs(ridden_mean(ride) - mean_power), pacing, ride)
    points = [(1.0, ridden_mean(ride))]
    scale = 1.0 + (mean_power - points[0][1]) * float(np.sum(seconds)) / work
    for _ in range(TRIM_ROUNDS):
        power = np.where(below, np.minimum(pacing.power * max(scale, 0.0), min(cp, top)), pacing.power)
        trimmed = course.ride(power, warm=ride)  # a few per cent of power away
        mean = ridden_mean(trimmed)
        low = float(np.min(w_prime_balance(trimmed.rider_power, trimmed.time, cp, w_prime), initial=w_prime))
        if low >= -W_PRIME_SLACK * w_prime and abs(mean - mean_power) < best[0]:
            best = (abs(mean - mean_power), dataclasses.replace(pacing, power=power), trimmed)
        if best[0] <= TRIM_TOLERANCE * mean_power or mean == points[-1][1]:
            break
        (s0, m0), points = points[-1], [*points, (scale, mean)]
        scale = s0 + (scale - s0) * (mean_power - m0) / (mean - m0)
    return best[1], best[2]


#: A trimmed plan's ride is within this share of the day's mean …
TRIM_TOLERANCE = 0.003
#: … or the best of this many rides.
TRIM_ROUNDS = 2


#: A day's ride, not a race: the default mean power is this share of the power the
#: rider could sustain for the ride's length (common practice, no published source).
RIDE_SHARE = 0.80


def day_effort(course: Course, *, cp: float, w_prime: float, top: float) -> tuple[float, float]:
    """The default day's effort: mean power [W] and the ride's length [s] it assumed.

    Notes
    -----
    P̄ = :data:`RIDE_SHARE` × min(CP, P_sustainable(T)), P_sustainable of
    :func:`~cardgen.physics.effort.sustainable_power_omni` (the omni-domain
    power–duration model), T the moving time at a constant P̄ on steady speeds: a
    fixed point, found by iteration (T falls as P̄ rises, so it settles). The time at
    constant power is a little longer than the paced ride's, so the default errs low.
    """
    table = block_times(course, top)
    powers, total = table.powers, table.times.sum(axis=1)
    mean = RIDE_SHARE * cp
    duration = float(np.interp(mean, powers[1:], total[1:]))
    for _ in range(30):
        sustainable = float(sustainable_power_omni(duration, cp, w_prime))
        new = min(RIDE_SHARE * min(cp, sustainable), top)
        duration = float(np.interp(new, powers[1:], total[1:]))
        if abs(new - mean) < 0.01:
            mean = new
            break
        mean = new
    return mean, duration
