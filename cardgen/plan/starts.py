"""Every rider's start on every route, computed once per event, in one pass over the
riders.

Rules, in order (README, "Starts and waves"):

1. a rider's own ``start``;
2. the first wave that names the rider, or a route they ride on. A wave is one start line: its riders leave one after
   another, ``interval`` apart, in the order of the entrants, whatever their route. A
   rider who rides several routes in one wave has one start, the same on each;
3. the route's own ``start``, its riders (those of steps 1–2 apart) spaced by the
   event's interval in the order of the entrants;
4. the event's ``start``, the n-th entrant n intervals after it;
5. otherwise no start (times are given from the start, "+1:07").

The input is the site's frozen settings (:class:`cardgen.settings.SiteConfig`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime, timedelta

from cardgen.settings import RouteConfig, SiteConfig, Wave


@dataclass(frozen=True)
class Start:
    """One rider's start on one route: the moment (None without an event time) and
    the wave's name (None outside waves)."""

    at: datetime | None
    wave: str | None = None


@dataclass(frozen=True)
class WaveStarts:
    """A wave's riders and its first and last start (None when nobody starts in it)."""

    name: str
    riders: int
    first: datetime | None
    last: datetime | None
    interval: float = 0.0  # [s] between its riders' starts


@dataclass(frozen=True)
class Starts:
    """Every start of an event: ``of(rider, route)`` by their indexes in the settings."""

    by_entry: dict[tuple[int, int], Start]
    waves: tuple[WaveStarts, ...]
    to_second: bool = False  # some start falls between whole minutes
    open_start: int = 0  # riders who start from the event's own start (rule 4)
    _none: Start = field(default=Start(None), repr=False)

    def of(self, rider: int, route: int) -> Start:
        return self.by_entry.get((rider, route), self._none)

    def route_starts(self, route: int) -> list[tuple[int, Start]]:
        """(rider index, start) of every rider of one route, in the entrants' order."""
        return sorted((r, s) for (r, k), s in self.by_entry.items() if k == route)


def route_name(route: RouteConfig) -> str:
    """What a route is called in ``routes`` lists: its name, else its file's stem."""
    return route.name or route.gpx.stem


def _route_waves(waves: tuple[Wave, ...], routes: tuple[RouteConfig, ...]) -> list[int | None]:
    """For each route, the first wave that names it (by file name, stem or name)."""
    first: list[int | None] = []
    for route in routes:
        names = {route.gpx.name, route.gpx.stem, route.name}
        first.append(next((w for w, wave in enumerate(waves) if names & set(wave.routes)), None))
    return first


def event_starts(site: SiteConfig) -> Starts:
    """Every rider's start on every route they ride, and each wave's first and last
    start; time linear in riders × routes + waves (one pass, dictionaries for names)."""
    day: date = site.day or (site.start.date() if site.start else date(2000, 1, 1))
    waves, routes = tuple(site.waves), tuple(site.routes)
    named: dict[str, int] = {}
    for w, wave in enumerate(waves):
        for name in wave.riders:
            named.setdefault(name, w)
    route_wave = _route_waves(waves, routes)
    names = [route_name(r) for r in routes]
    slots: list[dict[int, int]] = [{} for _ in waves]  # wave → rider index → place in the wave
    on_route_start = [0] * len(routes)
    by_entry: dict[tuple[int, int], Start] = {}
    opened: set[int] = set()
    for i, entrant in enumerate(site.riders):
        for k, route in enumerate(routes):
            if not entrant.rides(route, names[k]):
                continue
            if entrant.start is not None:
                by_entry[(i, k)] = Start(datetime.combine(day, entrant.start))
                continue
            choices = [w for w in (named.get(entrant.rider.name), route_wave[k]) if w is not None]
            if choices:
                w = min(choices)
                place = slots[w].setdefault(i, len(slots[w]))
                at = datetime.combine(day, waves[w].start) + timedelta(seconds=place * waves[w].interval)
                by_entry[(i, k)] = Start(at, waves[w].name)
            elif route.start is not None:
                at = datetime.combine(day, route.start) + timedelta(
                    seconds=on_route_start[k] * site.start_interval
                )
                on_route_start[k] += 1
                by_entry[(i, k)] = Start(at)
            elif site.start is not None:
                by_entry[(i, k)] = Start(site.start + timedelta(seconds=i * site.start_interval))
                opened.add(i)
            else:  # no event time: plans count from the start ("+1:07")
                by_entry[(i, k)] = Start(None)
    summary = []
    for w, wave in enumerate(waves):
        count = len(slots[w])
        first = datetime.combine(day, wave.start) if count else None
        last = first + timedelta(seconds=(count - 1) * wave.interval) if first else None
        summary.append(WaveStarts(wave.name, count, first, last, wave.interval))
    to_second = any(s.at is not None and (s.at.second or s.at.microsecond) for s in by_entry.values())
    return Starts(by_entry, tuple(summary), to_second, len(opened))
