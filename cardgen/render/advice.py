"""The pacing plan in words: the day's effort, where to spend it on each climb, and
whether to pedal on each descent. The plan holds the numbers; the words and their
rounding are made here (through :mod:`cardgen.render.format`)."""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Sequence

from cardgen.plan.model import ClimbRow, DescentRow, Plan
from cardgen.render import format as fmt

#: Names of the pacing styles on cards and pages.
STYLE_NAMES = {
    "best": "best use of the day's effort",
    "steady": "steady, never above CP",
}
#: Shares of W′ left at a climb's top and how the card says them: below the first,
#: "little left"; below the second, "about half left"; above it nothing is said.
LITTLE_LEFT = 0.25
SOME_LEFT = 0.6
#: A descent where the plan's mean power is below this share of the day's mean is
#: "ease off and let it roll"; otherwise "keep pedalling".
EASE_SHARE = 0.35
#: A descent's top speed within this share of the speed cap reaches it: the ride holds
#: the speed at the cap itself, to the solver's tolerance (1e-6 of the speed).
CAP_REACHED = 1e-3


def effort_line(plan: Plan, units: str = "metric") -> str:
    """The day's effort and style: "Pacing: steady, never above CP · 150 W on
    average, 70 % of CP (the default for a ride of about 3:20) · W′ (work above CP)
    15.0 kJ". W′ is not called a reserve: an e-assist card has a battery reserve too."""
    e = plan.effort
    if e is None:
        return ""
    # the share of the printed power, so that the two figures agree (240 W of a 360 W
    # CP is 67 %, though the plan's 239.4 W is 66 %)
    share = fmt.power_w(e.mean_power) / plan.rider.cp
    assumed = "your setting" if e.given else f"the default for a ride of about {fmt.duration(e.duration)}"
    return (
        f"Pacing: {STYLE_NAMES.get(e.style, e.style)} · {fmt.power(e.mean_power)} on average, "
        f"{share * 100:.0f} % of CP ({assumed}) · W′ (work above CP) {plan.rider.w_prime / 1000:.1f} kJ"
    )


def climb_advice(row: ClimbRow, plan: Plan, units: str = "metric", brief: bool = False) -> str:
    """Where to spend effort on a climb: "hold 265 W for 6 min; little left for the
    next 2.0 km". What is left is W′, the work a rider can do above CP (named so on
    the card's pacing line). ``brief``: the
    walking part without its length, so that climbs alike share a condensed line."""
    if row.time is None or not math.isfinite(row.time):  # the rider stalls on it
        return "not ridable at this effort (see the notes)"
    text = _hold(row, units, brief) + _assist_off(row, plan, units)
    if row.w_prime_top is None or plan.rider.w_prime <= 0:
        return text
    left = row.w_prime_top / plan.rider.w_prime
    if left < LITTLE_LEFT:
        after = row.recovered_after
        if after is not None and after > 0:
            return f"{text}; little left for the next {fmt.distance(after, units)}"
        return f"{text}; little W′ left at the top"
    if left < SOME_LEFT:
        return f"{text}; about half of W′ left at the top"
    return text


def _assist_off(row: ClimbRow, plan: Plan, units: str) -> str:
    """Where the motor is switched off part way up this climb to keep the battery's
    reserve ("; assist off at 5.3 km"): the climb's row names the level it starts
    with, and its speed and time already ride the rest without the motor."""
    off = plan.assist_off_at
    if off is None or not row.climb.start_distance < off < row.climb.start_distance + row.climb.length:
        return ""
    return f"; assist off at {fmt.distance(off, units)}"


def _hold(row: ClimbRow, units: str, brief: bool = False) -> str:
    """The power to hold and the time, and what the plan does where a two-wheeler
    falls below balance speed on a climb: it rides on at the same power, slowly, and
    times it so ("hold 150 W while riding, 20 min if all ridden; 850 m below 5.5 km/h:
    walking may be needed"). The power is for riding only: "hold 150 W for 20 min; …
    walk there if you must" read as holding 150 W while walking."""
    power = fmt.power(row.rider_power, rounding="down")
    walks = [w for w in row.warnings if w.code == "walk"]
    if not walks:
        return f"hold {power} for {fmt.minutes(row.time)}"
    text = f"hold {power} while riding, {fmt.minutes(row.time)} if all ridden"
    speed = min(w.value("speed") for w in walks)
    if brief:  # the lengths are in the "Watch for" box
        return f"{text}; below {fmt.speed(speed, units)} in places"
    # the length keeps its unit on its line (a no-break space): "1260" ended a coach
    # sheet's line with "m below 5.5 km/h" on the next
    length = fmt.length(sum(w.value("length") for w in walks), units).replace(" ", "\u00a0")
    return f"{text}; {length} below {fmt.speed(speed, units)}: walking may be needed"


def descent_advice(row: DescentRow, plan: Plan, units: str = "metric") -> str:
    """ "ease off and let it roll", "ease off; brake where the notes say" (the plan
    brakes on it and the descent has notes: a curve or coasting past the speed cap, so
    letting it roll would contradict them), "ease off; let it roll, braking at 45.0 km/h"
    (the plan brakes at the cap but coasting passes it by too little to warn of:
    :data:`cardgen.plan.rider.FAST_MARGIN`), "ease off; let it roll: it reaches 45.0
    km/h in places, brake to hold that" (coasting on the average grade stays under the
    cap, the table's unbraked speed, but steeper stretches or speed carried in reach
    it), or "keep pedalling, about 120 W".

    The cap is named only where the plan reaches it: a descent it brakes on only for a
    bend or turn too gentle to warn of (never at the cap of 60 km/h, its top 38.5 km/h)
    is "let it roll"; "braking at 60.0 km/h" there read as a speed to reach."""
    mean = plan.effort.mean_power if plan.effort is not None else plan.rider.flat_power
    if row.rider_power >= EASE_SHARE * mean:
        return f"keep pedalling, about {fmt.power(row.rider_power)}"
    if row.braking_energy <= 0:
        return "ease off and let it roll"
    if row.warnings:
        return "ease off; brake where the notes say"
    cap = plan.rider.vehicle.max_descent_speed
    if row.max_speed < cap * (1.0 - CAP_REACHED):
        return "ease off and let it roll"
    said = fmt.speed(cap, units, "down")
    if row.coast_speed < cap:
        return f"ease off; let it roll: it reaches {said} in places, brake to hold that"
    return f"ease off; let it roll, braking at {said}"


def _grouped(
    rows: Sequence[ClimbRow] | Sequence[DescentRow], advise: Callable[..., str], word: str
) -> list[str]:
    """Rows' advice in as few lines as it takes: rows with the same words share a line
    ("Descents 1, 2: ease off and let it roll"); a time shared is each row's ("Climbs
    2, 3: hold 240 W for 13 min each", not 13 min for both)."""
    groups: dict[str, list[str]] = {}
    for row in rows:
        groups.setdefault(advise(row), []).append(str(row.number))
    return [
        f"{word} {numbers[0]}: {text}"
        if len(numbers) == 1
        else f"{word}s {', '.join(numbers)}: {_each(text)}"
        for text, numbers in groups.items()
    ]


def _each(text: str) -> str:
    """ "hold 240 W for 13 min" → "hold 240 W for 13 min each" (the first time in it)."""
    return re.sub(r"(\d+ min|\d+:\d\d)\b", r"\1 each", text, count=1)


def descents_advice(plan: Plan, units: str = "metric") -> list[str]:
    """The descents' advice, one line per wording: "Descents 1, 2: ease off and let it
    roll"."""
    return _grouped(plan.descents, lambda row: descent_advice(row, plan, units), "Descent")


def climbs_advice(plan: Plan, units: str = "metric") -> list[str]:
    """The climbs' advice, one line per wording, for a condensed card: "Climbs 1, 2,
    5: hold 135 W for 24 min" (walking without its lengths: "…; below 5.5 km/h in
    places")."""
    return _grouped(plan.climbs, lambda row: climb_advice(row, plan, units, brief=True), "Climb")
