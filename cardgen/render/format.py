"""Numbers as a card prints them: rounded to what the model can support, in the
site's units. Pure functions of SI values; the templates call them as filters.

Rounding (what a model estimate supports): power to 5 W, speed to 0.5 km/h (or
0.5 mph), time to the minute, distance to 0.1 km (or 0.1 mi), height to 1 m (or 5 ft),
grade to 0.5 %, food energy to 10 kcal, battery to 1 Wh; a curve's radius down to
1 m below 30 m, 5 m below 100 m, else 10 m (5 ft in imperial units). Limits round
toward caution: a speed to slow to, a power to hold and a usable battery share round
down.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from datetime import datetime, timedelta
from typing import Concatenate, ParamSpec

from cardgen.units import J_PER_KCAL, J_PER_WH, KMH_PER_MS, M_PER_FT, M_PER_MI, MPH_PER_MS, ZERO_CELSIUS_K


def _nearest(value: float, step: float) -> float:
    """To the nearest step, half up. The small allowance rounds an exact half up in spite of
    float noise: 2150 m is 21.499999999999996 tenths of a km, which printed 2.1 km where
    a checkpoint given at 2.15 km reads 2.2 km in Python's own formatting (698 of the
    2,000 exact halves of 0.1 km up to 200 km printed a step low)."""
    return math.floor(value / step + 0.5 + 1e-9) * step


def _down(value: float, step: float) -> float:
    """To the step below: a limit (a power to hold, a speed to slow to) is never
    printed higher than it is. The small allowance keeps 225.0 at 225 despite float noise."""
    return math.floor(value / step + 1e-9) * step


_P = ParamSpec("_P")


def _missing(value: object) -> bool:
    return value is None or (isinstance(value, float) and not math.isfinite(value))


def _dash_if_missing(
    function: Callable[Concatenate[float, _P], str],
) -> Callable[Concatenate[float | None, _P], str]:
    """A value that is absent or not finite prints as a dash, never as "nan"."""

    @functools.wraps(function)
    def wrapper(value: float | None, /, *args: _P.args, **kwargs: _P.kwargs) -> str:
        if value is None or _missing(value):
            return "–"
        return function(value, *args, **kwargs)

    return wrapper


def power_w(watts: float, rounding: str = "nearest") -> float:
    """A power [W] as :func:`power` prints it: to 5 W."""
    return (_down if rounding == "down" else _nearest)(watts, 5)


@_dash_if_missing
def power(watts: float, rounding: str = "nearest") -> str:
    """ "185 W"; ``rounding="down"`` for a limit (223.5 W prints as 220 W)."""
    return f"{power_w(watts, rounding):.0f} W"


@_dash_if_missing
def speed(ms: float, units: str = "metric", rounding: str = "nearest") -> str:
    """ "12.5 km/h" or "7.5 mph"; ``rounding="down"`` for a limit (a speed to slow to)."""
    step = _down if rounding == "down" else _nearest
    if units == "imperial":
        return f"{step(ms * MPH_PER_MS, 0.5):.1f} mph"
    return f"{step(ms * KMH_PER_MS, 0.5):.1f} km/h"


@_dash_if_missing
def distance(metres: float, units: str = "metric") -> str:
    """ "12.3 km" or "7.6 mi"."""
    if units == "imperial":
        return f"{_nearest(metres / M_PER_MI, 0.1):.1f} mi"
    return f"{_nearest(metres / 1000, 0.1):.1f} km"


@_dash_if_missing
def length(metres: float, units: str = "metric") -> str:
    """Short lengths: "850 m" or "0.53 mi", and below a quarter mile in feet ("45 ft",
    a curve's radius); from 10 km as :func:`distance`."""
    if metres >= 10000:
        return distance(metres, units)
    if units == "imperial":
        if metres < M_PER_MI / 4:
            return f"{_nearest(metres / M_PER_FT, 5):.0f} ft"
        return f"{_nearest(metres / M_PER_MI, 0.01):.2f} mi"
    return f"{_nearest(metres, 10):.0f} m"


@_dash_if_missing
def leg(metres: float, units: str = "metric") -> str:
    """A cue sheet's distance to the next cue, in one unit down the column: "0.35 km",
    "8.45 km" (10 m steps, as :func:`length`) and from 10 km "12.3 km" (as
    :func:`distance`); in miles likewise ("0.21 mi", "12.3 mi")."""
    per, unit = (M_PER_MI, "mi") if units == "imperial" else (1000.0, "km")
    if metres >= 10 * per:
        return distance(metres, units)
    return f"{_nearest(metres / per, 0.01):.2f} {unit}"


@_dash_if_missing
def climb_length(metres: float, units: str = "metric") -> str:
    """A climb's length, in one unit down its column: "930 m", "1930 m", "12,340 m"
    (10 m steps, as :func:`length` below 10 km; a separator from five digits), or
    "1.20 mi" (0.01 mi, as :func:`leg`)."""
    if units == "imperial":
        return f"{_nearest(metres / M_PER_MI, 0.01):.2f} mi"
    rounded = _nearest(metres, 10)
    return f"{rounded:,.0f} m" if rounded >= 10000 else f"{rounded:.0f} m"  # "1930 m" as before


def radius_m(metres: float) -> float:
    """A curve's radius [m] as printed: rounded down (a tighter curve asks for a
    lower speed) to 1 m below 30 m, 5 m below 100 m, else 10 m."""
    step = 1.0 if metres < 30 else 5.0 if metres < 100 else 10.0
    return _down(metres, step)


@_dash_if_missing
def radius(metres: float, units: str = "metric") -> str:
    """A curve's radius: "7 m" (see :func:`radius_m`), or "20 ft" rounded down to 5 ft."""
    if units == "imperial":
        return f"{_down(metres / M_PER_FT, 5):.0f} ft"
    return f"{radius_m(metres):.0f} m"


def slow_to_kmh(ms: float) -> float:
    """A speed to slow to [km/h] as the card prints it: rounded down to 0.5 km/h."""
    return _down(ms * KMH_PER_MS, 0.5)


@_dash_if_missing
def height(metres: float, units: str = "metric") -> str:
    """ "240 m" or "785 ft"."""
    if units == "imperial":
        return f"{_nearest(metres / M_PER_FT, 5):.0f} ft"
    return f"{_nearest(metres, 1):.0f} m"


@_dash_if_missing
def grade(fraction: float) -> str:
    """ "7.5 %"."""
    return f"{_nearest(fraction * 100, 0.5):.1f} %"


@_dash_if_missing
def duration(seconds: float) -> str:
    """ "1:07" (hours:minutes), to the minute."""
    minutes = int(_nearest(seconds / 60, 1))
    return f"{minutes // 60}:{minutes % 60:02d}"


@_dash_if_missing
def minutes(seconds: float) -> str:
    """ "10 min", to the minute (planned stops)."""
    return f"{int(_nearest(seconds / 60, 1))} min"


def moment(start: datetime, seconds: float, to_second: bool = False) -> datetime:
    """The time of day ``seconds`` after ``start``, rounded to the nearest minute (half
    up; to the second when ``to_second``): every printed arrival, on cards, coach
    sheets, pages and plan.json, rounds this one way."""
    unit = 1.0 if to_second else 60.0
    return start + timedelta(seconds=_nearest(seconds / unit, 1) * unit)


def litres_range(pair: tuple[float, float] | None) -> str:
    """A fluid range "0.2–0.3 L": the low end rounded down, the high end up, to 0.1 L,
    so a range never prints as "0.2–0.2 L"; "–" without one."""
    if pair is None or _missing(pair[0]) or _missing(pair[1]):
        return "–"
    low, high = _down(pair[0], 0.1), _up(pair[1], 0.1)
    if high <= low:
        high = low + 0.1
    return f"{low:.1f}–{high:.1f} L"


def grams_range(pair: tuple[float, float] | None) -> str:
    """A carbohydrate range "39–77 g", each end to the nearest gram, half up like
    every other figure of this module (Jinja's ``round`` rounds half to even: 62.5 g
    printed 62); "–" without one, or where the guide gives none (under 45 min)."""
    if pair is None or _missing(pair[0]) or _missing(pair[1]) or pair[1] <= 0:
        return "–"
    return f"{_nearest(pair[0], 1):.0f}–{_nearest(pair[1], 1):.0f} g"


#: The 16 points of the compass, clockwise from north, 22.5° apart.
COMPASS = ("N", "NNE", "NE", "ENE", "E", "ESE", "SE", "SSE", "S", "SSW", "SW", "WSW", "W", "WNW", "NW", "NNW")


def conditions(weather: object, units: str = "metric") -> str:
    """The weather every figure assumes, so that a coach can tell when the day's
    differs: "wind 12.0 km/h from WSW (240°), 13 °C"; "no wind" when calm; "ISA air
    temperature" when none is given (the standard atmosphere's at each height).
    ``weather`` is a :class:`cardgen.settings.Conditions` (SI: m/s, rad, K)."""
    wind_speed = float(getattr(weather, "wind_speed", 0.0))
    if wind_speed > 0:
        degrees = int(_nearest(math.degrees(float(getattr(weather, "wind_from", 0.0))), 1)) % 360
        point = COMPASS[int(_nearest(degrees / 22.5, 1)) % 16]
        wind = f"wind {speed(wind_speed, units)} from {point} ({degrees}°)"
    else:
        wind = "no wind"
    kelvin = getattr(weather, "temperature", None)
    if kelvin is None or _missing(kelvin):
        return f"{wind}, ISA air temperature"
    celsius = kelvin - ZERO_CELSIUS_K
    if units == "imperial":
        return f"{wind}, {_nearest(celsius * 9 / 5 + 32, 1):.0f} °F"
    return f"{wind}, {_nearest(celsius, 1):.0f} °C"


def hhmm(when: datetime) -> str:
    """A moment as "09:42", rounded to the nearest minute like :func:`moment`."""
    return start_clock(when)


def clock(start: datetime | None, seconds: float | None) -> str:
    """Time of day "09:42" after ``seconds`` from ``start``; "+1:07" without a start.
    The moment itself rounds to the nearest minute, so a start with seconds (09:42:45)
    counts them, as plan.json and the day sheet do."""
    if seconds is None or _missing(seconds):
        return "–"
    if start is None:
        return "+" + duration(seconds)
    return start_clock(start + timedelta(seconds=seconds))


def gap(seconds: float) -> str:
    """Time between starts: "2 min", "30 s", "1 min 30 s"."""
    minutes, rest = divmod(round(seconds), 60)
    if not rest:
        return f"{minutes} min"
    return f"{minutes} min {rest} s" if minutes else f"{rest} s"


def spacing(riders: int, interval: float) -> str:
    """How a wave's riders start, after its count: ", 30 s apart", ", together" (no
    interval), or "" for a single rider."""
    if riders <= 1:
        return ""
    return f", {gap(interval)} apart" if interval else ", together"


def start_clock(when: datetime | None, to_second: bool = False) -> str:
    """A start's (or an arrival's) time of day: "09:30", or "09:30:30" when the event's
    starts are seconds apart (half-minute starts would otherwise print as repeated
    minutes), rounded like :func:`moment`; "–" without one."""
    if when is None:
        return "–"
    whole = when.replace(second=0, microsecond=0)
    rounded = moment(whole, when.second + when.microsecond / 1e6, to_second)
    return rounded.strftime("%H:%M:%S" if to_second else "%H:%M")


@_dash_if_missing
def food(joules: float) -> str:
    """ "1,240 kcal"."""
    return f"{_nearest(joules / J_PER_KCAL, 10):,.0f} kcal"


def _up(value: float, step: float) -> float:
    """To the step above: a need (energy the plan draws) is never printed lower than it is."""
    return math.ceil(value / step - 1e-9) * step


def need(value: float, step: float) -> float:
    """``value`` rounded up to a multiple of ``step`` (what to stock: never printed
    below the sum it stands for), without a float's tail (4.1, not 4.1000000000000005)."""
    return round(_up(value, step), max(0, -math.floor(math.log10(step))))


def battery_wh(joules: float, rounding: str = "nearest") -> float:
    """Battery energy [Wh] as :func:`battery` prints it."""
    wh = joules / J_PER_WH
    return float({"down": _down, "up": _up}.get(rounding, _nearest)(wh, 1))


@_dash_if_missing
def battery(joules: float, rounding: str = "nearest") -> str:
    """ "213 Wh": to 1 Wh, so that what is drawn and what is kept add up to the usable
    figure on every page. ``rounding="down"`` for what can
    be drawn (a limit: 54 Wh usable prints as 54 Wh, never 55), ``"up"`` for what the
    plan needs."""
    return f"{battery_wh(joules, rounding):.0f} Wh"


@_dash_if_missing
def score(value: float) -> str:
    """FIETS index to one decimal."""
    return f"{value:.1f}"


FILTERS = {
    "power": power,
    "speed": speed,
    "distance": distance,
    "length": length,
    "leg": leg,
    "climb_length": climb_length,
    "radius": radius,
    "height": height,
    "grade": grade,
    "duration": duration,
    "minutes": minutes,
    "food": food,
    "battery": battery,
    "score": score,
    "hhmm": hhmm,
    "litres_range": litres_range,
    "grams_range": grams_range,
    "conditions": conditions,
}
