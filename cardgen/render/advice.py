"""The pacing plan in words: the day's effort, where to spend it on each climb, and
whether to pedal on each descent. The plan holds the numbers; the words and their
rounding are made here (through :mod:`cardgen.render.format`)."""

from __future__ import annotations

import math
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


def effort_line(plan: Plan, units: str = "metric") -> str:
    """The day's effort and style: "Pacing: steady, never above CP · 150 W on
    average, 70 % of CP (the default for a ride of about 3:20) · W′ (work above CP)
    15.0 kJ". W′ is not called a reserve: an e-assist card has a battery reserve too."""
    e = plan.effort
    if e is None:
        return ""
    share = e.mean_power / plan.rider.cp
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
    text = f"hold {fmt.power(row.rider_power, rounding='down')} for {fmt.minutes(row.time)}"
    text += _below_balance(row, units, brief)
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


def _below_balance(row: ClimbRow, units: str, brief: bool = False) -> str:
    """What the plan does where a two-wheeler falls below balance speed on a climb: it
    rides on at the same power, slowly, and times it so ("; 850 m below 5.5 km/h,
    timed as ridden; walking may be needed there"); "" where it never does. Said beside the
    power to hold, so that "hold 150 W" does not read as if it kept the rider upright."""
    walks = [w for w in row.warnings if w.code == "walk"]
    if not walks:
        return ""
    length = sum(w.value("length") for w in walks)
    speed = min(w.value("speed") for w in walks)
    if brief:  # the lengths are in the "Watch for" box
        return f"; below {fmt.speed(speed, units)} in places, timed as ridden"
    return (
        f"; {fmt.length(length, units)} below {fmt.speed(speed, units)}, timed as ridden; "
        "walking may be needed there"
    )


def descent_advice(row: DescentRow, plan: Plan, units: str = "metric") -> str:
    """ "ease off and let it roll", "ease off; brake where the notes say" (the plan
    brakes on it and the descent has notes: a curve or coasting past the speed cap, so
    letting it roll would contradict them), "ease off; let it roll, braking at 45.0 km/h"
    (the plan brakes at the cap but coasting passes it by too little to warn of:
    :data:`cardgen.plan.rider.FAST_MARGIN`), or "keep pedalling, about 120 W"."""
    mean = plan.effort.mean_power if plan.effort is not None else plan.rider.flat_power
    if row.rider_power < EASE_SHARE * mean:
        if row.braking_energy <= 0:
            return "ease off and let it roll"
        if row.warnings:
            return "ease off; brake where the notes say"
        return f"ease off; let it roll, braking at {fmt.speed(plan.rider.vehicle.max_descent_speed, units, 'down')}"
    return f"keep pedalling, about {fmt.power(row.rider_power)}"


def _grouped(
    rows: Sequence[ClimbRow] | Sequence[DescentRow], advise: Callable[..., str], word: str
) -> list[str]:
    """Rows' advice in as few lines as it takes: rows with the same words share a line
    ("Descents 1, 2: ease off and let it roll")."""
    groups: dict[str, list[str]] = {}
    for row in rows:
        groups.setdefault(advise(row), []).append(str(row.number))
    return [
        f"{word if len(numbers) == 1 else word + 's'} {', '.join(numbers)}: {text}"
        for text, numbers in groups.items()
    ]


def descents_advice(plan: Plan, units: str = "metric") -> list[str]:
    """The descents' advice, one line per wording: "Descents 1, 2: ease off and let it
    roll"."""
    return _grouped(plan.descents, lambda row: descent_advice(row, plan, units), "Descent")


def climbs_advice(plan: Plan, units: str = "metric") -> list[str]:
    """The climbs' advice, one line per wording, for a condensed card: "Climbs 1, 2,
    5: hold 135 W for 24 min" (walking without its lengths: "…; below 5.5 km/h in
    places, timed as ridden")."""
    return _grouped(plan.climbs, lambda row: climb_advice(row, plan, units, brief=True), "Climb")
