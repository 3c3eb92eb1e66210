"""The organiser's day sheet: for each checkpoint, feed point and marshal point of a
route, who is due when, what a feed must stock, and when the sweep gets there. Every
number comes from the riders' own plans (the same ones their cards print).

- Timetable: the first and last planned arrival, the riders due in each quarter hour,
  and the point's window (:func:`cardgen.plan.event.checkpoint_windows`: a feed or
  marshal point's window by the same rule as a checkpoint's).
- Stock where riders get food: at a feed point (``[[routes]] feeds``) and at a
  checkpoint with a planned stop. Carbohydrate and fluid for the leg from there to
  the next such place (or the finish), summed over the people due there (both riders
  of a tandem: the guides are per person), each at the top of the rider's own guide (:func:`cardgen.plan.fuel.legs`: the ride's length for
  carbohydrate, the day's temperature band for fluid), plus :data:`STOCK_MARGIN`.
  A marshal point stocks nothing.
- Sweep: when the last rider is planned to leave the checkpoint (their stop
  included), and when a sweep leaving :data:`SWEEP_DELAY` after the last start at
  :data:`SWEEP_SPEED` reaches it, never before that last rider has left (a sweep
  rides behind the field; where it would catch up, it waits).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta

from cardgen.plan.event import CheckpointWindow, checkpoint_windows
from cardgen.plan.fuel import Leg, fluid_rate, legs
from cardgen.plan.model import Plan
from cardgen.route.checkpoints import Checkpoint
from cardgen.units import KMH_PER_MS

#: Quarter hours of the riders-due chart [s].
BIN = 15 * 60.0
#: Stock over the summed plans, for riders who eat and drink more than planned and
#: for spills: 20 % (common practice, no published source).
STOCK_MARGIN = 0.20
#: The sweep: a bicycle at 15 km/h average over the route, leaving 10 min after the
#: last start (common practice for a ridden sweep at the back of a sportive, no
#: published source). [m/s], [s]
SWEEP_SPEED = 15 / KMH_PER_MS
SWEEP_DELAY = 10 * 60.0


@dataclass(frozen=True)
class PointDay:
    """One point's day (a checkpoint, feed or marshal point: ``kind``). Times are None
    where nobody is due."""

    name: str
    kind: str  # "checkpoint", "feed" or "marshal"
    distance: float  # [m]
    opens: datetime
    closes: datetime
    riders: int  # riders planned to reach it (vehicles: a tandem is one)
    first: datetime | None
    last: datetime | None
    quarters: tuple[tuple[datetime, int], ...]  # (quarter hour, riders due in it)
    stop: float  # [s] planned stop there
    carbs_g: float | None  # to stock for the next leg (margin included); 0 where no food is
    fluid_l: float | None  # planned; None at a marshal point (it stocks nothing)
    last_leaves: datetime | None  # the last rider's planned departure (stop included)
    sweep: datetime  # when the sweep reaches it
    people: int = 0  # people planned to reach it (a tandem's two); the stock is theirs


def _quarters(arrivals: list[datetime]) -> tuple[tuple[datetime, int], ...]:
    """Riders due per quarter hour, from the first quarter to the last, empty ones
    included (a gap in the field shows as a gap in the chart)."""
    if not arrivals:
        return ()
    first = min(arrivals)
    base = first.replace(minute=first.minute - first.minute % 15, second=0, microsecond=0)
    counts: dict[int, int] = {}
    for a in arrivals:
        k = int((a - base).total_seconds() // BIN)
        counts[k] = counts.get(k, 0) + 1
    return tuple((base + timedelta(seconds=k * BIN), counts.get(k, 0)) for k in range(max(counts) + 1))


def supplies_food(point: Checkpoint | PointDay) -> bool:
    """Whether riders get food and drink at ``point``: a feed point, or a checkpoint
    with a planned stop."""
    return point.kind == "feed" or (point.kind == "checkpoint" and point.stop > 0)


def _stock_legs(
    plans: Sequence[Plan], windows: Sequence[CheckpointWindow], temperature_c: float | None
) -> list[dict[float, Leg]]:
    """Per rider, the leg that starts at each place where food is (by distance [m]):
    from there to the next such place or the finish."""
    places = sorted(
        {w.checkpoint.distance: w.checkpoint.name for w in windows if supplies_food(w.checkpoint)}.items()
    )
    return [{leg.start: leg for leg in legs(plan, places, temperature_c)} for plan in plans]


def day_points(
    plans: Sequence[Plan],
    starts: Sequence[datetime],
    windows: Sequence[CheckpointWindow],
    temperature_c: float | None,
    points: Sequence[Checkpoint] = (),
    margin: float = 0.0,
    speeds: tuple[float, float] | None = None,
) -> list[PointDay]:
    """The day sheet's rows for one route: its checkpoints (``windows``) and its feed
    and marshal ``points`` (their windows made here by the checkpoints' rule:
    ``margin`` [s] or ``speeds``, see :func:`checkpoint_windows`), by distance, from
    its riders' plans and starts (one each)."""
    if points:
        extra, _ = checkpoint_windows(plans, points, list(starts), margin, speeds)
        windows = sorted([*windows, *extra], key=lambda w: w.checkpoint.distance)
    rider_legs = _stock_legs(plans, windows, temperature_c)
    last_start = max(starts)
    rows, stocked = [], set()
    for window in windows:
        point = window.checkpoint
        due = [(a, i) for i, a in enumerate(window.arrivals) if a is not None]
        arrivals = [a for a, _ in due]
        carbs = fluid = 0.0
        if supplies_food(point) and point.distance not in stocked:  # the next leg of everyone due there
            stocked.add(point.distance)  # two points at one place stock it once
            for _, i in due:
                leg = rider_legs[i].get(point.distance)
                stock = leg.stock() if leg else None
                carbs += stock[0] if stock else 0.0
                fluid += stock[1] if stock else 0.0
        stop = timedelta(seconds=point.stop)
        arrivals_left = [max(arrivals) + stop] if arrivals else []
        marshal = point.kind == "marshal"
        rows.append(
            PointDay(
                point.name,
                point.kind,
                point.distance,
                window.opens,
                window.closes,
                len(due),
                min(arrivals) if arrivals else None,
                max(arrivals) if arrivals else None,
                _quarters(arrivals),
                point.stop,
                None if marshal else carbs * (1 + STOCK_MARGIN),
                None if marshal else fluid * (1 + STOCK_MARGIN),
                max(arrivals) + stop if arrivals else None,
                max(
                    [last_start + timedelta(seconds=SWEEP_DELAY + point.distance / SWEEP_SPEED)]
                    + arrivals_left
                ),
                sum(plans[i].rider.vehicle.riders for _, i in due),
            )
        )
    return rows


def fluid_band(temperature_c: float | None) -> tuple[float, float]:
    """The fluid guide [L/h] the stock uses (the day's temperature band)."""
    return fluid_rate(temperature_c)
