"""Notices in words: one plain sentence per code, numbers in the chosen units."""

from __future__ import annotations

from collections.abc import Callable

from cardgen.plan.model import Notice
from cardgen.render import format as fmt


def _battery(n: Notice, units: str) -> str:
    where = n.value("where")
    place = (
        f"the battery reaches its {n.value('reserve'):.0%} reserve near {fmt.distance(where, units)}: "
        if where
        else ""
    )
    return (
        f"{place}the plan needs about {fmt.battery(n.value('used'), 'up')} of the "
        f"{fmt.battery(n.value('usable'), 'down')} usable; "
        "ride lower levels before that, or carry a spare"
    )


def _over_cp(n: Notice, units: str) -> str:
    """The target speed's power above CP, and the speed at CP (to the nearest 0.5
    km/h, as the climb's speed column) where the plan holds less than CP there: where
    it already holds CP the speed column gives that speed, and "at CP expect" would
    suggest a power the plan holds."""
    text = f"the target speed takes {fmt.power(n.value('power'))}, above this rider's CP of {n.value('cp'):.0f} W"
    speed = n.value("speed")
    return text if speed is None else f"{text}; at CP expect about {fmt.speed(speed, units)}"


def _curve(n: Notice, units: str) -> str:
    slow = f"slow to {fmt.speed(n.value('speed'), units, 'down')} or less"
    where = fmt.distance(n.value("where"), units)
    if n.value("junction"):
        return f"turn at {where}, reached fast: {slow} (a turn taken at {fmt.radius(n.value('radius'), units)} radius)"
    return f"curve of {fmt.radius(n.value('radius'), units)} radius at {where}: {slow}"


def _w_prime(n: Notice, units: str) -> str:
    advice = (
        f"hold about {fmt.power(n.value('hold'), 'down')} instead"
        if n.value("hold") is not None
        else "ease off before the climb to recover"
    )
    return f"at {fmt.power(n.value('power'))} W′ (the work the rider can do above CP) runs out on this climb; {advice}"


_WORDS: dict[str, Callable[[Notice, str], str]] = {
    "track": lambda n, units: str(n.value("text")),
    "w-prime": _w_prime,
    "walk": lambda n, units: (
        f"below {fmt.speed(n.value('speed'), units)} for about "
        f"{fmt.length(n.value('length'), units)}: hard to balance on two wheels; "
        "walking may be needed"
    ),
    "steep": lambda n, units: (
        f"steepest {fmt.length(n.value('length', 100.0), units)} at {fmt.grade(n.value('grade'))}"
    ),
    "fast": lambda n, units: (
        f"coasting would reach {fmt.speed(n.value('coast'), units)}, above the "
        f"{fmt.speed(n.value('cap'), units)} set for this vehicle: control the speed"
    ),
    "curve": lambda n, units: _curve(n, units),
    "assist-lowered": lambda n, units: (
        f"assist between climbs planned at level {n.value('level'):.0f}, not the {n.value('asked'):.0f} asked for, "
        "so that the battery keeps its reserve for the climbs"
    ),
    "unsettled": lambda n, units: (
        f"the ride model had not settled after {n.value('passes'):.0f} passes; times and battery may be "
        "a little off"
    ),
    "stall": lambda n, units: (
        f"the rider cannot complete the route at this effort: the speed falls to zero near "
        f"{fmt.distance(n.value('where'), units)}; plan more power, more assist, walking there, or a shorter route"
    ),
    "crawl": lambda n, units: (
        f"slow going: below {fmt.speed(n.value('speed'), units)} for about {fmt.length(n.value('length'), units)}, "
        f"{fmt.duration(n.value('time'))} on this climb; plan rests and drink"
    ),
    "over-cp": _over_cp,
    "traction": lambda n, units: (
        f"{fmt.grade(n.value('grade'))} at the steepest: a driven front wheel may slip; ask your coach or "
        "clinician how best to ride it (keeping weight over the front wheel may help)"
    ),
    "battery": lambda n, units: _battery(n, units),
}


def notice_text(notice: Notice, units: str = "metric") -> str:
    """The sentence for ``notice`` in ``units`` ("metric" or "imperial")."""
    try:
        words = _WORDS[notice.code]
    except KeyError:
        raise ValueError(f"no words for notice code {notice.code!r}; known: {', '.join(_WORDS)}") from None
    return words(notice, units)
