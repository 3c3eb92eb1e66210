"""Numbers as a card prints them: rounded to what the model can support, in the
site's units. Pure functions of SI values; the templates call them as filters.

Rounding (what a model estimate supports): power to 5 W, speed to 0.5 km/h (or
0.5 mph), time to the minute, distance to 0.1 km (or 0.1 mi), height to 1 m (or 5 ft),
grade to 0.5 %, food energy to 10 kcal, battery to 5 Wh.
"""

from __future__ import annotations

import math
from datetime import datetime, timedelta

from cardgen.units import J_PER_KCAL, KMH_PER_MS, MPH_PER_MS

M_PER_MI = 1609.344
M_PER_FT = 0.3048


def _nearest(value: float, step: float) -> float:
    return math.floor(value / step + 0.5) * step


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and not math.isfinite(value))


def power(watts) -> str:
    """"185 W"."""
    if _missing(watts):
        return "–"
    return f"{_nearest(watts, 5):.0f} W"


def speed(ms, units: str = "metric") -> str:
    """"12.5 km/h" or "7.5 mph"."""
    if _missing(ms):
        return "–"
    if units == "imperial":
        return f"{_nearest(ms * MPH_PER_MS, 0.5):.1f} mph"
    return f"{_nearest(ms * KMH_PER_MS, 0.5):.1f} km/h"


def distance(metres, units: str = "metric") -> str:
    """"12.3 km" or "7.6 mi"."""
    if _missing(metres):
        return "–"
    if units == "imperial":
        return f"{_nearest(metres / M_PER_MI, 0.1):.1f} mi"
    return f"{_nearest(metres / 1000, 0.1):.1f} km"


def length(metres, units: str = "metric") -> str:
    """Short lengths: "850 m" or "0.53 mi"; from 10 km as :func:`distance`."""
    if _missing(metres):
        return "–"
    if metres >= 10000:
        return distance(metres, units)
    if units == "imperial":
        return f"{_nearest(metres / M_PER_MI, 0.01):.2f} mi"
    return f"{_nearest(metres, 10):.0f} m"


def height(metres, units: str = "metric") -> str:
    """"240 m" or "785 ft"."""
    if _missing(metres):
        return "–"
    if units == "imperial":
        return f"{_nearest(metres / M_PER_FT, 5):.0f} ft"
    return f"{_nearest(metres, 1):.0f} m"


def grade(fraction) -> str:
    """"7.5 %"."""
    if _missing(fraction):
        return "–"
    return f"{_nearest(fraction * 100, 0.5):.1f} %"


def duration(seconds) -> str:
    """"1:07" (hours:minutes), to the minute."""
    if _missing(seconds):
        return "–"
    minutes = int(_nearest(seconds / 60, 1))
    return f"{minutes // 60}:{minutes % 60:02d}"


def clock(start: datetime | None, seconds) -> str:
    """Time of day "09:42" after ``seconds`` from ``start``; "+1:07" without a start."""
    if _missing(seconds):
        return "–"
    if start is None:
        return "+" + duration(seconds)
    when = start + timedelta(seconds=_nearest(seconds / 60, 1) * 60)
    return when.strftime("%H:%M")


def food(joules) -> str:
    """"1,240 kcal"."""
    if _missing(joules):
        return "–"
    return f"{_nearest(joules / J_PER_KCAL, 10):,.0f} kcal"


def battery(joules) -> str:
    """"215 Wh"."""
    if _missing(joules):
        return "–"
    return f"{_nearest(joules / 3600, 5):.0f} Wh"


def score(value) -> str:
    """FIETS index to one decimal."""
    if _missing(value):
        return "–"
    return f"{value:.1f}"


FILTERS = {
    "power": power, "speed": speed, "distance": distance, "length": length, "height": height,
    "grade": grade, "duration": duration, "food": food, "battery": battery, "score": score,
}
