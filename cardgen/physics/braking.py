"""Speed limits on the road: the speed a curve allows and the deceleration a rider
brakes with before a limit. Both are per segment or node, numpy in, numpy out.

References
----------
AASHTO (1999). *Guide for the Development of Bicycle Facilities*: stopping sight
distance S = V²/(254·(f ± G)) with f = 0.25 (wet pavement, ordinary brakes).
FHWA-HRT-04-103 (2004). *Characteristics of Emerging Road and Trail Users and Their
Safety*: curve speed from the lateral acceleration (friction factor) riders accept.
"""

from __future__ import annotations

import numpy as np

from cardgen.units import G0, Floats

#: Braking friction before a speed limit: f = 0.25 of the AASHTO Guide for the
#: Development of Bicycle Facilities (1999) stopping-sight-distance formula
#: S = V²/(254·(f ± G)) (wet pavement, ordinary brakes) [S]; the deceleration on a
#: grade G is g·(f + G), less on a descent.
BRAKING_FRICTION = 0.25
BRAKING = BRAKING_FRICTION * G0  # on the flat [m/s²]
#: Least braking deceleration used, on the steepest descents [m/s²] (common practice,
#: no published source: a rider on a descent steeper than f still slows, by braking
#: harder or walking).
LEAST_BRAKING = 0.05 * G0


def braking(grade: Floats) -> np.ndarray:
    """Braking deceleration on each segment.

    Parameters
    ----------
    grade : float or array [-] rise/run

    Returns
    -------
    array [m/s²]: g·(f + G), at least :data:`LEAST_BRAKING`.

    References
    ----------
    AASHTO (1999), Guide for the Development of Bicycle Facilities (f = 0.25).
    """
    return np.maximum(G0 * (BRAKING_FRICTION + np.asarray(grade, dtype=float)), LEAST_BRAKING)


def curve_speed(lateral_accel: float, radius: Floats) -> np.ndarray:
    """The speed a curve allows.

    Parameters
    ----------
    lateral_accel : float [m/s²] the lateral acceleration the vehicle and rider accept
    radius : float or array [m] curve radius (inf on a straight)

    Returns
    -------
    array [m/s]: v = √(a·R) (inf on a straight).

    References
    ----------
    FHWA-HRT-04-103 (2004), friction factor f = v²/(g·R) taken by trail users.
    """
    return np.sqrt(lateral_accel * np.asarray(radius, dtype=float))
