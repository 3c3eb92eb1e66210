"""What the pages show of one route's riders together, computed once when the route
is planned (render only formats it): the checkpoints' windows, each rider's food and
fluid legs and guide rates, the spread and regroup waits of riders who start
together, and the organiser's day-sheet rows (checkpoints, feed and marshal
points)."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

from cardgen.plan.day import PointDay, day_points
from cardgen.plan.event import CheckpointWindow, checkpoint_windows, group_spread
from cardgen.plan.fuel import carb_rate, fluid_rate, legs
from cardgen.plan.model import Entry, RouteJob
from cardgen.plan.route_plans import RoutePlans
from cardgen.units import S_PER_H

#: The longest ride [h] the carbohydrate guide is looked up for (a rider who never
#: finishes gets the longest band, not an infinity).
LONGEST_RIDE_H = 1e6


def route_job(
    slug: str,
    name: str,
    notes: str,
    planned: RoutePlans,
    entries: Sequence[Entry],
    margin: float,
    speed_rule: tuple[float, float] | None,
    temperature_c: float | None,
) -> RouteJob:
    """One route's plans (``planned``: :class:`~cardgen.plan.route_plans.RoutePlans`)
    and riders (``entries``, their plans in ``planned``'s order) with every figure the
    pages print about them together. ``margin`` [s] and ``speed_rule`` ((slowest,
    fastest) [m/s] or None) set the checkpoints' windows
    (:func:`~cardgen.plan.event.checkpoint_windows`), which exist only when every
    rider has a start; ``temperature_c`` [°C] (None: not configured) sets the fluid
    guide."""
    checkpoints = tuple(planned.checkpoints)
    feeds = [(c.distance, c.name) for c in checkpoints]
    riders = tuple(
        dataclasses.replace(
            e,
            legs=tuple(legs(e.plan, feeds, temperature_c)),
            fuel_rates=(
                carb_rate(min(e.plan.finish_elapsed / S_PER_H, LONGEST_RIDE_H)),
                fluid_rate(temperature_c),
            ),
        )
        for e in entries
    )
    points = tuple(planned.points)  # feed and marshal points
    job = RouteJob(slug, name, notes, planned.analysis, checkpoints, riders, points)
    plans = [e.plan for e in riders]
    starts = [e.start for e in riders if e.start is not None]
    windows: tuple[CheckpointWindow, ...] = ()
    day: tuple[PointDay, ...] = ()
    if plans and len(starts) == len(plans):  # windows from each rider's own start
        rows, _ = checkpoint_windows(plans, checkpoints, starts, margin, speed_rule)
        windows = tuple(rows)
        if windows or points:
            day = tuple(day_points(plans, starts, windows, temperature_c, points, margin, speed_rule))
    return dataclasses.replace(job, windows=windows, together=tuple(group_spread(job)), day=day)
