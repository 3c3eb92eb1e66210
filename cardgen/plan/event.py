"""Plans of many riders together: checkpoint opening and closing times, and the
spread and regroup waits of riders who start together."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any

import numpy as np

from cardgen.plan.model import Entry, Plan, RouteJob
from cardgen.route.checkpoints import Checkpoint


@dataclass(frozen=True)
class CheckpointWindow:
    checkpoint: Checkpoint
    opens: datetime
    closes: datetime
    arrivals: tuple[datetime | None, ...]  # one per plan, in the order given; None: never arrives


def checkpoint_windows(
    plans: Sequence[Plan],
    checkpoints: Sequence[Checkpoint],
    start: datetime | Sequence[datetime],
    margin: float,
    speeds: tuple[float, float] | None = None,
) -> tuple[list[CheckpointWindow], CheckpointWindow]:
    """Opening and closing times of checkpoints.

    ``start`` is every rider's start (one per plan), or one start for all. From the
    riders' own arrivals (their planned stops included), a checkpoint opens ``margin``
    seconds before the earliest and closes ``margin`` seconds after the latest. With
    ``speeds`` = (slowest, fastest) average speeds [m/s] since the start (the usual
    rule of timed events; common practice, no published source), it opens at the
    first start + distance / fastest and closes at the last start + distance /
    slowest, widened where needed so that every planned arrival, and every planned
    stop at the checkpoint to its end, lies inside (a window that shuts while a rider
    is still stopped there helps nobody). Both to the whole minute outward; the finish
    likewise. Returns (windows, finish window).
    """
    starts = list(start) if not isinstance(start, datetime) else [start] * len(plans)

    def at(plan: Plan, begin: datetime, distance: float) -> datetime | None:
        seconds = plan.elapsed_at(distance)
        return begin + timedelta(seconds=seconds) if np.isfinite(seconds) else None

    def window(checkpoint: Checkpoint) -> CheckpointWindow:
        arrivals = tuple(at(p, s, checkpoint.distance) for p, s in zip(plans, starts, strict=True))
        stop = timedelta(seconds=checkpoint.stop)
        reached = [a for a in arrivals if a is not None] or [min(starts)]  # none arrives: the first start
        if speeds is not None:
            slowest, fastest = speeds
            opens = min(starts) + timedelta(seconds=checkpoint.distance / fastest)
            closes = max(starts) + timedelta(seconds=checkpoint.distance / slowest)
            opens, closes = min(opens, min(reached)), max(closes, max(reached) + stop)
        else:
            opens = min(reached) - timedelta(seconds=margin)
            closes = max(reached) + stop + timedelta(seconds=margin)
        # to the minute, outward: a planned arrival is never outside the printed window
        return CheckpointWindow(checkpoint, _minute_down(opens), _minute_up(closes), arrivals)

    rows = [window(checkpoint) for checkpoint in sorted(checkpoints, key=lambda c: c.distance)]
    return rows, window(Checkpoint("Finish", plans[0].terrain.length))


def _minute_down(when: datetime) -> datetime:
    return when.replace(second=0, microsecond=0)


def _minute_up(when: datetime) -> datetime:
    down = _minute_down(when)
    return down if down == when else down + timedelta(minutes=1)


def group_spread(job: RouteJob) -> list[dict[str, Any]]:
    """For each set of two or more riders who start together: at every climb top and
    checkpoint, the first and last planned arrival, the spread between them, and the
    wait that regroups them there if they regrouped at the point before (the gap that
    opened since). Times in seconds from their start."""
    points = sorted(
        [(c.end_distance, f"top of climb {i + 1}") for i, c in enumerate(job.analysis.climbs)]
        + [(c.distance, c.name) for c in job.checkpoints]
        + [(job.analysis.terrain.length, "Finish")]
    )
    together: dict[datetime, list[Entry]] = {}
    for e in job.riders:
        if e.start is not None:
            together.setdefault(e.start, []).append(e)
    groups = []
    for start, members in sorted(together.items()):
        if len(members) < 2:
            continue
        rows, before = [], [0.0] * len(members)
        for distance, name in points:
            at = [m.plan.elapsed_at(distance) for m in members]
            if not all(t == t and t != float("inf") for t in at):
                break  # someone cannot get there: the spread means nothing beyond
            legs = [a - b for a, b in zip(at, before, strict=True)]
            rows.append(
                {
                    "name": name,
                    "distance": distance,
                    "first": start + timedelta(seconds=min(at)),
                    "last": start + timedelta(seconds=max(at)),
                    "spread": max(at) - min(at),
                    "wait": max(legs) - min(legs),
                }
            )
            before = at
        groups.append({"start": start, "riders": [m.name for m in members], "rows": rows})
    return groups
