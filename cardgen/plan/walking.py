"""Where a rider on two wheels may have to walk: one rule for the plan's totals, its
climbs' notices and the notices away from the climbs, so that plan.json, the card,
the coach sheet and ``cardgen route`` agree.

A stretch is walked where the planned speed, averaged over :data:`WALK_SPAN` (distance
over time, so a slow segment weighs by the time spent on it), stays below the
vehicle's least stable speed while the rider is pedalling. Slowing for a curve or a
turn (the simulation held the speed down to a limit) is braking, not walking; a
single slow segment (a noisy point, a U-turn) is averaged out.

What a rider reads is where to get off and for how long, not every pitch that dips
below the balance speed: walked stretches with less than :data:`WALK_GAP` of riding
between them are one stretch (the ridden gap walked too), and a stretch still shorter
than :data:`WALK_MIN` is ridden through. A stretch is only ever joined to another or
dropped, so joining never makes walking where the averaged speed shows none.
"""

from __future__ import annotations

import numpy as np

#: Distance [m] over which the planned speed is averaged before it is compared with
#: the least stable speed: common practice, no published source (a rider keeps their
#: balance through a short slow patch).
WALK_SPAN = 50.0
#: Ridden gap [m] between two walked stretches below which the gap is walked too:
#: common practice, no published source (getting back on and off again to ride less
#: than this, a minute or two on a climb, costs more than it gains, and a tandem or
#: a loaded bike is hard to restart uphill).
WALK_GAP = 200.0
#: A walked stretch shorter than this [m], once joined, is ridden through: common
#: practice, no published source (as for :data:`WALK_SPAN`: a rider keeps going
#: through a short slow patch rather than dismount for it). The averaging over
#: :data:`WALK_SPAN` widens a slow patch by up to that span, so this is about 50 m of
#: ground below the balance speed; at 50 m, isolated pieces of 50–70 m stayed (8 on
#: a weak tandem's generated 160 km route).
WALK_MIN = 100.0


def walking_mask(
    step: float,
    time: np.ndarray,
    rider_power: np.ndarray,
    limited: np.ndarray,
    min_speed: float,
) -> np.ndarray:
    """Segments [bool, per segment] of a simulated ride that are walked.

    Parameters
    ----------
    step : float [m] segment length (along the map)
    time : array [s] time on each segment (inf where the rider stalls)
    rider_power : array [W] the rider's power on each segment
    limited : array of bool, segments where a speed limit held the speed down
    min_speed : float [m/s] the least stable speed (0: never walked, three wheels)
    """
    n = time.size
    walked = np.zeros(n, dtype=bool)
    if min_speed <= 0 or n == 0:
        return walked
    k = min(n, max(1, int(round(WALK_SPAN / step))))
    seconds = np.concatenate(([0.0], np.cumsum(np.where(np.isfinite(time), time, 1e12))))
    lo = np.clip(np.arange(n) - k // 2, 0, n - k)
    average = k * step / (seconds[lo + k] - seconds[lo])  # [m/s] over the span around each segment
    walked = np.asarray((average < min_speed) & (rider_power > 0) & ~np.asarray(limited, dtype=bool))
    return joined(walked, gap=int(round(WALK_GAP / step)), least=int(round(WALK_MIN / step)))


def joined(mask: np.ndarray, gap: int, least: int) -> np.ndarray:
    """``mask`` with its runs less than ``gap`` segments apart made one run (the gap
    included), then the runs shorter than ``least`` segments cleared."""
    out = mask.astype(bool, copy=True)
    runs = stretches(out)
    if not runs:
        return out
    starts = np.array([a for a, _ in runs])
    ends = np.array([b for _, b in runs])
    close = starts[1:] - ends[:-1] < gap  # the gap after each run but the last
    keep = np.concatenate(([True], ~close))  # a run that starts a joined stretch
    first = starts[keep]
    last = ends[np.concatenate((~close, [True]))]
    out[:] = False
    for a, b in zip(first, last, strict=True):
        if b - a >= least:
            out[a:b] = True
    return out


def stretches(mask: np.ndarray) -> list[tuple[int, int]]:
    """(first, last + 1) segment index of each run of ``mask``."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2], strict=True)]


def widened(mask: np.ndarray, lo: int, hi: int) -> tuple[int, int]:
    """Segments ``lo``…``hi`` (end excluded) widened to take in whole every run of
    ``mask`` that overlaps them: a walk that runs into a climb is the climb's, all of
    it."""
    for a, b in stretches(mask):
        if a < hi and b > lo:
            lo, hi = min(lo, a), max(hi, b)
    return lo, hi
