"""Plans of many riders together: checkpoint opening and closing times."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta

import numpy as np

from cardgen.plan.model import Plan
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
) -> tuple[list[CheckpointWindow], CheckpointWindow]:
    """Opening and closing times of checkpoints from the riders' own arrivals.

    ``start`` is every rider's start (one per plan), or one start for all. A checkpoint
    opens ``margin`` seconds before the earliest planned arrival and closes ``margin``
    seconds after the latest, both to the whole minute outward; the finish closes
    likewise. Returns (windows, finish window).
    """
    starts = list(start) if not isinstance(start, datetime) else [start] * len(plans)

    def at(plan: Plan, begin: datetime, distance: float) -> datetime | None:
        seconds = float(np.interp(distance, plan.terrain.distance, plan.ride.elapsed))
        return begin + timedelta(seconds=seconds) if np.isfinite(seconds) else None

    def window(checkpoint: Checkpoint) -> CheckpointWindow:
        arrivals = tuple(at(p, s, checkpoint.distance) for p, s in zip(plans, starts, strict=True))
        reached = [a for a in arrivals if a is not None] or [min(starts)]  # none arrives: at the first start
        # to the minute, outward: a planned arrival is never outside the printed window
        return CheckpointWindow(
            checkpoint,
            _minute_down(min(reached) - timedelta(seconds=margin)),
            _minute_up(max(reached) + timedelta(seconds=margin)),
            arrivals,
        )

    rows = [window(cp) for cp in sorted(checkpoints, key=lambda c: c.distance)]
    return rows, window(Checkpoint("Finish", plans[0].terrain.length))


def _minute_down(when: datetime) -> datetime:
    return when.replace(second=0, microsecond=0)


def _minute_up(when: datetime) -> datetime:
    down = _minute_down(when)
    return down if down == when else down + timedelta(minutes=1)
