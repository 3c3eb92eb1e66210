"""Where a rider on two wheels may have to walk: one rule for the plan's totals, its
climbs' notices and the notices away from the climbs, so that plan.json, the card,
the coach sheet and ``cardgen route`` agree.

A stretch is walked where the planned speed, averaged over :data:`WALK_SPAN` (distance
over time, so a slow segment weighs by the time spent on it), stays below the
vehicle's least stable speed while the rider is pedalling. Slowing for a curve or a
turn (the simulation held the speed down to a limit) is braking, not walking; a
single slow segment (a noisy point, a U-turn) is averaged out.
"""

from __future__ import annotations

import numpy as np

#: Distance [m] over which the planned speed is averaged before it is compared with
#: the least stable speed: common practice, no published source (a rider keeps their
#: balance through a short slow patch).
WALK_SPAN = 50.0


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
    return np.asarray((average < min_speed) & (rider_power > 0) & ~np.asarray(limited, dtype=bool))


def stretches(mask: np.ndarray) -> list[tuple[int, int]]:
    """(first, last + 1) segment index of each run of ``mask``."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return [(int(a), int(b)) for a, b in zip(edges[::2], edges[1::2], strict=True)]
