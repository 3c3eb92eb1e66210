"""Site settings: the frozen, checked data of a site, made by :mod:`cardgen.config`.

Plain values only: no physics and no file reading here. Times are ``datetime.time``
of day; durations and speeds are SI (s, m/s), distances m.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime, time
from pathlib import Path

from cardgen.profiles.riders import Rider


@dataclass(frozen=True)
class Conditions:
    """Weather: ``wind_speed`` [m/s], ``wind_from`` [rad] clockwise from north (where
    the wind comes from), ``temperature`` [K] or None for the ISA temperature."""

    wind_speed: float = 0.0
    wind_from: float = 0.0
    temperature: float | None = None


@dataclass(frozen=True)
class RouteConfig:
    gpx: Path
    name: str | None = None
    notes: str = ""
    checkpoints: tuple[
        str | float, ...
    ] = ()  # names (str) or distances [m] (float); empty: waypoints typed "checkpoint"
    start: time | None = None  # this route's own first start
    stop: float = 0.0  # [s] planned stop at each checkpoint
    stops: tuple[float, ...] = ()  # [s] planned stop at each checkpoint listed, in order
    cue_texts: tuple[tuple[float, str], ...] = ()  # (where [m], the organiser's words)
    feeds: tuple[str | float, ...] = ()  # feed points: names (str) or distances [m] (float), no planned stop
    marshals: tuple[str | float, ...] = ()  # marshal points, the same


@dataclass(frozen=True)
class Wave:
    name: str
    start: time
    interval: float  # [s] between its riders
    routes: tuple[str, ...] = ()  # riders on these routes (empty and no riders: everyone)
    riders: tuple[str, ...] = ()  # these riders, by name


@dataclass(frozen=True)
class RiderConfig:
    rider: Rider
    routes: tuple[str, ...] = ()  # empty: every route
    start: time | None = None  # the rider's own start
    bib: int | None = None

    def rides(self, route: RouteConfig, name: str) -> bool:
        return (
            not self.routes
            or route.gpx.name in self.routes
            or route.gpx.stem in self.routes
            or name in self.routes
        )


@dataclass(frozen=True)
class SiteConfig:
    source: Path | None  # the TOML file, None for a zero-config folder
    folder: Path  # where relative paths start
    title: str
    units: str
    card_size: str
    large_print: bool
    output: Path
    base_url: str
    templates: Path | None
    start: datetime | None
    start_interval: float  # [s] between riders' starts
    checkpoint_margin: float  # [s]
    conditions: Conditions
    routes: tuple[RouteConfig, ...]
    riders: tuple[RiderConfig, ...]
    warnings: tuple[str, ...] = field(default=())
    inputs: tuple[Path, ...] = field(default=())  # every file and folder the configuration reads
    notes: tuple[str, ...] = field(default=())  # where the model used another value than the one given
    waves: tuple[Wave, ...] = field(default=())
    day: date | None = None  # the event's date
    speed_rule: tuple[float, float] | None = None  # (slowest, fastest) [m/s] for checkpoint windows
    contact: str = ""  # the organiser's contact, on every card
    emergency: str = ""  # emergency numbers, on every card
