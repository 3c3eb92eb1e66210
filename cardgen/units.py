"""Unit conversions, used only at the edges (command line, templates).

Everything inside cardgen is SI: m, s, kg, W, J, Pa, K, rad, grade as a fraction.
"""

from __future__ import annotations

from typing import Any

import numpy as np

#: Seconds in an hour; joules in a watt-hour.
S_PER_H = 3600.0
J_PER_WH = 3600.0
#: The international mile and foot (1959 agreement), exact.
M_PER_MI = 1609.344
M_PER_FT = 0.3048
KMH_PER_MS = 3.6
MPH_PER_MS = S_PER_H / M_PER_MI
J_PER_KCAL = 4184.0  # thermochemical calorie, ISO 80000-5
ZERO_CELSIUS_K = 273.15
#: Standard gravity [m/s²], exact by definition (CGPM 1901): also converts g to m/s².
G0 = 9.80665


def kmh_to_ms(speed_kmh: Floats) -> np.ndarray:
    """Convert km/h to m/s."""
    return np.asarray(speed_kmh, dtype=float) / KMH_PER_MS


def ms_to_kmh(speed: Floats) -> np.ndarray:
    """Convert m/s to km/h."""
    return np.asarray(speed, dtype=float) * KMH_PER_MS


def pct_to_grade(grade_pct: Floats) -> np.ndarray:
    """Convert a grade in percent (rise/run × 100) to a fraction."""
    return np.asarray(grade_pct, dtype=float) / 100.0


def celsius_to_kelvin(temperature_c: Floats) -> np.ndarray:
    """Convert °C to K."""
    return np.asarray(temperature_c, dtype=float) + ZERO_CELSIUS_K


#: A float or an array of floats: what the physics and route functions take and give.
Floats = float | np.ndarray


def scalar_or_array(values: Any) -> Floats:
    """numpy's ``values[()]``: a 0-d result as a numpy float (a ``float``), any other
    as the array itself; typed, so that functions that give what they were given
    return :data:`Floats` rather than ``Any``."""
    out: Floats = np.asarray(values)[()]
    return out
