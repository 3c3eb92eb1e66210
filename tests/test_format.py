"""Every printed number: rounding and units (render/format.py), worked by hand.

Conversions: 1 mile = 1609.344 m and 1 foot = 0.3048 m exactly (the international
yard and pound agreement, 1959); 1 kcal = 4184 J (thermochemical calorie, ISO
80000-5); 1 Wh = 3600 J.
"""

import math
from datetime import datetime, timedelta

import pytest

from cardgen.render import format as fmt


@pytest.mark.parametrize(
    ("function", "value", "units", "text"),
    [
        (fmt.power, 187.4, None, "185 W"),  # to 5 W
        (fmt.power, 187.6, None, "190 W"),
        (fmt.speed, 5.0, "metric", "18.0 km/h"),  # 5 m/s × 3.6
        (fmt.speed, 5.0, "imperial", "11.0 mph"),  # 5 / 0.44704 = 11.18 → to 0.5
        (fmt.distance, 12345.0, "metric", "12.3 km"),
        (fmt.distance, 12345.0, "imperial", "7.7 mi"),  # 12345 / 1609.344 = 7.67
        (fmt.length, 849.0, "metric", "850 m"),  # to 10 m
        (fmt.length, 12000.0, "metric", "12.0 km"),  # from 10 km as a distance
        (fmt.length, 850.0, "imperial", "0.53 mi"),  # 850 / 1609.344 = 0.528
        (fmt.length, 13.2, "imperial", "45 ft"),  # a curve's radius: 13.2 / 0.3048 = 43.3, to 5 ft
        (fmt.length, 400.0, "imperial", "1310 ft"),  # below a quarter mile (402.3 m): 1312.3 ft, to 5 ft
        (fmt.length, 410.0, "imperial", "0.25 mi"),  # from a quarter mile in miles
        (fmt.height, 240.4, "metric", "240 m"),
        (fmt.height, 240.0, "imperial", "785 ft"),  # 240 / 0.3048 = 787.4 → to 5 ft
        (fmt.grade, 0.0749, None, "7.5 %"),  # to 0.5 %
        (fmt.grade, -0.062, None, "-6.0 %"),
        (fmt.duration, 4020.0, None, "1:07"),  # 67 min
        (fmt.duration, 29.0, None, "0:00"),
        (fmt.food, 1237 * 4184.0, None, "1,240 kcal"),  # to 10 kcal
        (fmt.battery, 217.4 * 3600.0, None, "217 Wh"),  # to 1 Wh
        (fmt.battery, 217.5 * 3600.0, None, "218 Wh"),  # half up
        (fmt.score, 1.2345, None, "1.2"),
    ],
)
def test_rounding_and_units(function, value, units, text):
    assert (function(value) if units is None else function(value, units)) == text


@pytest.mark.parametrize(
    "function",
    [
        fmt.power,
        fmt.speed,
        fmt.distance,
        fmt.length,
        fmt.height,
        fmt.grade,
        fmt.duration,
        fmt.food,
        fmt.battery,
        fmt.score,
    ],
)
@pytest.mark.parametrize("missing", [None, math.nan, math.inf, -math.inf])
def test_missing_or_infinite_prints_a_dash(function, missing):
    assert function(missing) == "–"


def test_clock_times():
    start = datetime(2027, 4, 18, 8, 0)
    assert fmt.clock(start, 3600 + 29) == "09:00"  # to the minute
    assert fmt.clock(start, 3600 + 31) == "09:01"
    assert fmt.clock(None, 4020) == "+1:07"  # no start: time after the start
    assert fmt.clock(start, math.inf) == "–"


def test_arrival_after_a_start_with_seconds_rounds_the_moment():
    """A rider of a wave 15 s apart starts at 09:42:45 and reaches the checkpoint
    36 min 54 s later, at 10:19:39: the card must read 10:20, as plan.json and the day
    sheet round it, not 10:19 (the start's seconds dropped before adding). Found on a
    300-rider, four-wave event: 141 of 553 checkpoint times on the cards were a minute
    early against plan.json."""
    start = datetime(2027, 6, 12, 9, 42, 45)
    assert fmt.clock(start, 36 * 60 + 54) == "10:20"
    assert fmt.clock(start, 36 * 60 + 44) == "10:19"  # 10:19:29
    assert fmt.clock(start, 36 * 60 + 45) == "10:20"  # 10:19:30, half up
    assert fmt.clock(start, 36 * 60 + 54) == fmt.start_clock(start + timedelta(seconds=36 * 60 + 54))


def test_limits_round_the_safe_way():
    assert fmt.power(223.5, "down") == "220 W"  # a sustainable climbing power (model) is never printed higher
    assert fmt.power(225.0, "down") == "225 W"
    assert fmt.speed(15.9 / 3.6, "metric", "down") == "15.5 km/h"  # nor a safe curve speed
    assert fmt.speed(16.0 / 3.6, "metric", "down") == "16.0 km/h"


def test_arrivals_round_one_way_everywhere():
    """An arrival rounds to the nearest minute, half up, the same in plan.json (via
    fmt.moment) as on the cards (fmt.clock): 08:00 + 9 min 29 s is 08:09, + 9 min 30 s
    is 08:10 (not truncated to 08:09, 51 s early, as before)."""
    from datetime import datetime

    from cardgen.render.format import clock, moment

    start = datetime(2027, 4, 18, 8, 0)
    for seconds, text in ((569.0, "08:09"), (570.0, "08:10"), (599.0, "08:10"), (3599.4, "09:00")):
        assert clock(start, seconds) == text
        assert moment(start, seconds).strftime("%H:%M") == text
    assert moment(start, 569.6, to_second=True).strftime("%H:%M:%S") == "08:09:30"
    from cardgen.render.format import hhmm

    assert (
        hhmm(datetime(2027, 4, 18, 8, 9, 29)) == "08:09" and hhmm(datetime(2027, 4, 18, 8, 9, 30)) == "08:10"
    )


def test_fluid_ranges_never_print_as_one_figure():
    """0.21–0.24 L once printed "0.2–0.2 L": low end down, high end up, to 0.1 L."""
    from cardgen.render.format import litres_range

    assert litres_range((0.21, 0.24)) == "0.2–0.3 L"
    assert litres_range((0.2, 0.2)) == "0.2–0.3 L"
    assert litres_range((0.4, 0.6)) == "0.4–0.6 L"
    assert litres_range(None) == "–"


def test_a_carbohydrate_range_rounds_half_up_like_every_other_figure():
    """62.5 g is 63 g, as a half rounds everywhere on the card; Jinja's ``round``
    filter, which the card used, rounds half to even and printed 62 (and 38.5 as 38)."""
    from cardgen.render.format import grams_range

    assert grams_range((62.5, 93.75)) == "63–94 g"
    assert grams_range((38.5, 77.0)) == "39–77 g"
    assert grams_range((24.49, 36.7)) == "24–37 g"
    assert grams_range((0.0, 26.4)) == "0–26 g"  # under 75 min: 0–30 g an hour
    assert grams_range((0.0, 0.0)) == "–"  # under 45 min: none (Thomas et al. 2016)
    assert grams_range(None) == "–"
    assert grams_range((float("nan"), 1.0)) == "–"


def test_a_cue_sheet_leg_keeps_one_unit_down_the_column():
    # "Next" mixed "850 m" and "12.3 km" in one column; now every row is in km (mi)
    legs = [50.0, 850.0, 9994.0, 12_300.0]
    assert [fmt.leg(m) for m in legs] == ["0.05 km", "0.85 km", "9.99 km", "12.3 km"]
    assert [fmt.leg(m, "imperial") for m in (80.0, 1609.344, 20_000.0)] == ["0.05 mi", "1.00 mi", "12.4 mi"]


def test_the_card_cue_sheet_prints_its_legs_with_the_leg_filter():
    from cardgen.paths import default_templates

    text = (default_templates() / "cues.html").read_text(encoding="utf-8")
    assert "row.next | leg(units)" in text and "row.next | length" not in text


@pytest.mark.parametrize(
    ("wind_kmh", "from_deg", "celsius", "units", "text"),
    [
        # the demo's day: 12 km/h from 240°, which lies within 11.25° of WSW (247.5°)
        (12.0, 240.0, 13.0, "metric", "wind 12.0 km/h from WSW (240°), 13 °C"),
        # 12 km/h = 7.46 mph, to 0.5 mph; 13 °C = 55.4 °F
        (12.0, 240.0, 13.0, "imperial", "wind 7.5 mph from WSW (240°), 55 °F"),
        (20.0, 359.6, None, "metric", "wind 20.0 km/h from N (0°), ISA air temperature"),
        (20.0, 11.3, -4.0, "metric", "wind 20.0 km/h from N (11°), -4 °C"),  # the point of the printed 11°
        (20.0, 11.6, -4.0, "metric", "wind 20.0 km/h from NNE (12°), -4 °C"),  # past 11.25°
        (0.0, 90.0, 25.0, "metric", "no wind, 25 °C"),
    ],
)
def test_the_weather_the_figures_assume(wind_kmh, from_deg, celsius, units, text):
    from cardgen.settings import Conditions

    weather = Conditions(
        wind_speed=wind_kmh / 3.6,
        wind_from=math.radians(from_deg),
        temperature=None if celsius is None else celsius + 273.15,
    )
    assert fmt.conditions(weather, units) == text
