"""Site configuration: a TOML file checked against a declared schema in one pass.

Every problem is collected with its file, key and (where it can be found) line, and
reported together; unknown keys are warnings. Paths resolve against the config
file's folder.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from pathlib import Path
from typing import Any

from cardgen.errors import CardgenError, ConfigError
from cardgen.physics.atmosphere import Conditions
from cardgen.profiles.limits import LIMITS
from cardgen.profiles.riders import Rider
from cardgen.profiles.tables import read_toml
from cardgen.profiles.vehicles import Vehicle, builtin_vehicles, find_vehicle

CARD_SIZES = ("A5", "A4", "pocket")
#: Years an event may be in: keeps every start, arrival and window a real date.
EVENT_YEARS = (1900, 2200)
#: Longest base_url: its QR code must stay readable on a card.
MAX_URL_LENGTH = 200
UNITS = ("metric", "imperial")
#: Riders of a zero-config build (a folder of GPX files without site.toml).
DEFAULT_RIDERS = (
    ("Upright bike", "city-upright"),
    ("Road bike", "road-hoods"),
    ("E-assist bike", "e-assist-city"),
    ("Handcycle", "handcycle"),
)


@dataclass(frozen=True)
class Spec:
    """One key of the schema: its kind, whether it must be given, its default, and for
    numbers the allowed range."""

    kind: str  # "str", "bool", "number", "int", "choice", "list", "date", "time", "path", "vehicle", "url"
    required: bool = False
    default: Any = None
    limit: str = ""  # for numbers: the key of cardgen.profiles.limits.LIMITS with the range
    choices: tuple = ()
    help: str = ""

    @property
    def about(self) -> str:
        """What the key is, for messages."""
        return self.help or (LIMITS[self.limit].help if self.limit else "")


SCHEMA = {
    "site": {
        "title": Spec("str", default="Route cards", help="the site's title"),
        "units": Spec("choice", default="metric", choices=UNITS),
        "card_size": Spec("choice", default="A5", choices=CARD_SIZES),
        "large_print": Spec("bool", default=False),
        "output": Spec("str", default="site", help="output folder, relative to this file"),
        "base_url": Spec("url", default="", help="the site's address, for QR codes on cards"),
        "templates": Spec("str", default="", help="a folder of templates that override cardgen's"),
    },
    "event": {
        "date": Spec("date", help='like "2027-04-18"'),
        "start": Spec("time", help='like "08:30"'),
        "start_interval_min": Spec("number", default=0.0, limit="start_interval_min"),
        "checkpoint_margin_min": Spec("number", default=15.0, limit="checkpoint_margin_min"),
    },
    "conditions": {
        "wind_kmh": Spec("number", default=0.0, limit="wind_kmh"),
        "wind_from_deg": Spec("number", default=0.0, limit="wind_from_deg"),
        "temperature_c": Spec("number", limit="temperature_c"),
    },
    "routes": {
        "gpx": Spec("path", required=True, help="a GPX file, relative to this file"),
        "name": Spec("str"),
        "notes": Spec("str", default=""),
        "checkpoints": Spec("list", help="waypoint names or distances in km"),
    },
    "riders": {
        "name": Spec("str", required=True),
        "vehicle": Spec("vehicle", required=True, help="a built-in vehicle or a .toml profile"),
        "cp_w": Spec("number", limit="cp_w"),
        "w_prime_kj": Spec("number", limit="w_prime_kj"),
        "flat_w": Spec("number", limit="flat_w"),
        "climb_w": Spec("number", limit="climb_w"),
        "climb_share": Spec("number", limit="climb_share"),
        "target_kmh": Spec("number", limit="target_kmh"),
        "cruise_level": Spec("int", limit="cruise_level"),
        "routes": Spec("list", help="only these routes (GPX file names or route names)"),
    },
}
TABLE_ARRAYS = {"routes", "riders"}


@dataclass(frozen=True)
class RouteConfig:
    gpx: Path
    name: str | None = None
    notes: str = ""
    checkpoints: tuple = ()  # names (str) or distances [m] (float); empty: waypoints typed "checkpoint"


@dataclass(frozen=True)
class RiderConfig:
    rider: Rider
    routes: tuple[str, ...] = ()  # empty: every route

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


_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-]+)\s*=")


def line_index(text: str) -> dict[tuple[str, int | None, str], int]:
    """Line numbers of the TOML text's keys, by (section, index of a ``[[section]]``
    or None, key); "" is the header's own line. One pass over the text."""
    index: dict[tuple[str, int | None, str], int] = {}
    counts: dict[str, int] = {}
    section, number = "", None
    for line_no, line in enumerate(text.splitlines(), 1):
        header = _HEADER.match(line)
        if header:
            section = header.group(2)
            if header.group(1) == "[[":
                number = counts.get(section, -1) + 1
                counts[section] = number
            else:
                number = None
            index.setdefault((section, number, ""), line_no)
            continue
        key = _KEY.match(line)
        if key:
            index.setdefault((section, number, key.group(1)), line_no)
    return index


class _Checker:
    def __init__(self, path: Path | None, text: str):
        self.path = path
        self.text = text
        self.lines = line_index(text)
        self.problems: list[str] = []
        self.warnings: list[str] = []
        self.inputs: list[Path] = []

    def where(self, section: str, index: int | None, key: str) -> str:
        name = f"{section}[{index}].{key}" if index is not None else f"{section}.{key}"
        line = self.lines.get((section, index, key))
        place = f"{self.path}" + (f", line {line}" if line else "") if self.path else "settings"
        return f"{place}: {name}"

    # one branch per kind of key, each short; splitting them apart would scatter the schema's rules
    def value(self, section: str, table: dict, index: int | None, key: str, spec: Spec, folder: Path):  # noqa: C901
        if key not in table:
            if spec.required:
                self.problems.append(
                    f"{self.where(section, index, key)} is missing ({spec.about or spec.kind})"
                )
            return spec.default
        raw = table[key]
        where = self.where(section, index, key)
        kind = spec.kind
        if kind in ("number", "int"):
            if kind == "int" and (isinstance(raw, bool) or not isinstance(raw, int)):
                self.problems.append(f"{where} must be a whole number, not {raw!r}")
                return spec.default
            problem = LIMITS[spec.limit].problem(raw)
            if problem:
                self.problems.append(f"{where} {problem}" + (f" ({spec.about})" if spec.about else ""))
                return spec.default
            return raw
        if kind == "bool":
            if not isinstance(raw, bool):
                self.problems.append(f"{where} must be true or false, not {raw!r}")
                return spec.default
            return raw
        if kind in ("str", "path", "vehicle", "choice"):
            if not isinstance(raw, str):
                self.problems.append(f"{where} must be text in quotes, not {raw!r}")
                return spec.default
            if kind == "choice" and raw not in spec.choices:
                self.problems.append(f"{where} = {raw!r}; use one of {', '.join(spec.choices)}")
                return spec.default
            if kind == "path":
                resolved = (folder / raw).resolve()
                if not resolved.is_file():
                    self.problems.append(
                        f"{where}: no file {resolved}; check the path (relative to {folder})"
                    )
                    return None
                return resolved
            if kind == "vehicle":
                candidate = folder / raw
                name = str(candidate) if raw.lower().endswith(".toml") else raw
                if raw.lower().endswith(".toml"):
                    self.inputs.append(candidate)
                try:
                    return find_vehicle(name)
                except CardgenError as exc:
                    self.problems.append(f"{where}: {exc}")
                    return None
            return raw
        if kind == "list":
            if not isinstance(raw, list) or not all(
                isinstance(x, str | int | float) and not isinstance(x, bool) for x in raw
            ):
                self.problems.append(f'{where} must be a list like ["name", 12.5]')
                return None
            return tuple(raw)
        if kind == "date":
            try:
                day = (
                    raw
                    if isinstance(raw, date) and not isinstance(raw, datetime)
                    else date.fromisoformat(str(raw))
                )
            except ValueError:
                self.problems.append(f'{where} = {raw!r} is not a date like "2027-04-18"')
                return None
            if not EVENT_YEARS[0] <= day.year <= EVENT_YEARS[1]:
                self.problems.append(
                    f"{where} = {day.isoformat()} is outside the years "
                    f"{EVENT_YEARS[0]}…{EVENT_YEARS[1]}; check the year"
                )
                return None
            return day
        if kind == "url":
            if not isinstance(raw, str):
                self.problems.append(f"{where} must be text in quotes, not {raw!r}")
                return spec.default
            if raw and (
                not raw.lower().startswith(("http://", "https://"))
                or len(raw) > MAX_URL_LENGTH
                or any(c.isspace() or ord(c) < 32 for c in raw)
            ):
                self.problems.append(
                    f"{where} must be an http:// or https:// address of at most "
                    f'{MAX_URL_LENGTH} characters without spaces, like "https://example.org/rides"'
                )
                return spec.default
            return raw
        if kind == "time":
            if isinstance(raw, time):
                return raw
            try:
                return time.fromisoformat(str(raw))
            except ValueError:
                self.problems.append(f'{where} = {raw!r} is not a time like "08:30"')
                return None
        raise AssertionError(kind)

    def table(self, section: str, table: Any, index: int | None, folder: Path) -> dict:
        schema = SCHEMA[section]
        if not isinstance(table, dict):
            shape = f"[[{section}]] tables" if section in TABLE_ARRAYS else f"a [{section}] table"
            self.problems.append(f"{self.path}: {section} must be {shape}, not {type(table).__name__}")
            return {key: None for key in schema}
        for key in table:
            if key not in schema:
                self.warnings.append(
                    f"{self.where(section, index, key)}: unknown key, ignored "
                    f"(known: {', '.join(schema)})"
                )
        return {key: self.value(section, table, index, key, spec, folder) for key, spec in schema.items()}


def load_config(path: Path) -> SiteConfig:
    """Read and check a site.toml; raises ConfigError listing every problem."""
    path = Path(path)
    data, text = read_toml(path, "site configuration", ConfigError)
    return _from_data(data, path, text, path.resolve().parent)


def _from_data(data: dict, path: Path | None, text: str, folder: Path) -> SiteConfig:  # noqa: C901 (one pass, in order)
    check = _Checker(path, text)
    for key in data:
        if key not in SCHEMA:
            check.warnings.append(f"{path}: [{key}]: unknown section, ignored (known: {', '.join(SCHEMA)})")
    tables = {}
    for section in ("site", "event", "conditions"):
        tables[section] = check.table(section, data.get(section, {}), None, folder)
    routes_raw = data.get("routes", [])
    riders_raw = data.get("riders", [])
    for section, raw in (("routes", routes_raw), ("riders", riders_raw)):
        if not isinstance(raw, list) or not raw:
            check.problems.append(f"{path}: no [[{section}]] entries; add at least one")
    routes = [
        check.table("routes", t, i, folder)
        for i, t in enumerate(routes_raw if isinstance(routes_raw, list) else [])
    ]
    riders = [
        check.table("riders", t, i, folder)
        for i, t in enumerate(riders_raw if isinstance(riders_raw, list) else [])
    ]

    rider_objects = []
    for i, r in enumerate(riders):
        vehicle: Vehicle | None = r["vehicle"]
        if vehicle is None or r["name"] is None:
            continue
        given = {}
        for key, attr, factor in (
            ("cp_w", "cp", 1.0),
            ("w_prime_kj", "w_prime", 1000.0),
            ("flat_w", "flat_power", 1.0),
            ("climb_w", "climb_power", 1.0),
            ("climb_share", "climb_share", 1.0),
            ("target_kmh", "target_speed", 1 / 3.6),
            ("cruise_level", "cruise_level", 1),
        ):
            if r[key] is not None:
                given[attr] = r[key] * factor if factor != 1 else r[key]
        try:
            rider_objects.append(
                RiderConfig(
                    Rider.for_vehicle(vehicle, name=r["name"], **given),
                    tuple(str(x) for x in (r["routes"] or ())),
                )
            )
        except CardgenError as exc:
            check.problems.append(f"{check.where('riders', i, 'name')}: {exc}")
    names = [rc.rider.name for rc in rider_objects]
    for name in {n for n in names if names.count(n) > 1}:
        check.problems.append(f"{path}: two riders are named {name!r}; give each a different name")

    site, event, cond = tables["site"], tables["event"], tables["conditions"]
    start = None
    if event["start"] is not None:
        start = datetime.combine(event["date"] or date(2000, 1, 1), event["start"])
    templates = None
    if site["templates"]:
        templates = (folder / site["templates"]).resolve()
        if not templates.is_dir():
            check.problems.append(f"{check.where('site', None, 'templates')}: no folder {templates}")
    if check.problems:
        raise ConfigError(
            f"{len(check.problems)} problem(s) in the configuration:\n  " + "\n  ".join(check.problems)
        )
    conditions = Conditions(
        cond["wind_kmh"] / 3.6,
        math.radians(cond["wind_from_deg"]),
        None if cond["temperature_c"] is None else cond["temperature_c"] + 273.15,
    )
    route_objects = tuple(
        RouteConfig(
            r["gpx"],
            r["name"],
            r["notes"] or "",
            tuple(x * 1000.0 if isinstance(x, int | float) else x for x in (r["checkpoints"] or ())),
        )
        for r in routes
    )
    return SiteConfig(
        source=path,
        folder=folder,
        title=site["title"],
        units=site["units"],
        card_size=site["card_size"],
        large_print=site["large_print"],
        output=(folder / site["output"]).resolve(),
        base_url=site["base_url"],
        templates=templates,
        start=start,
        start_interval=event["start_interval_min"] * 60.0,
        checkpoint_margin=event["checkpoint_margin_min"] * 60.0,
        conditions=conditions,
        routes=route_objects,
        riders=tuple(rider_objects),
        warnings=tuple(check.warnings),
        inputs=tuple(
            dict.fromkeys(
                [
                    *([path] if path else []),
                    folder,
                    *(r.gpx for r in route_objects),
                    *check.inputs,
                    *([templates] if templates else []),
                ]
            )
        ),
    )


def folder_config(folder: Path) -> SiteConfig:
    """A site for a folder of GPX files without site.toml: every route, default riders."""
    folder = Path(folder).resolve()
    gpx = sorted(p for p in folder.iterdir() if p.suffix.lower() == ".gpx" and p.is_file())
    if not gpx:
        raise ConfigError(f"{folder}: no site.toml and no .gpx files; add routes or a site.toml")
    lib = builtin_vehicles()
    riders = tuple(RiderConfig(Rider.for_vehicle(lib[v], name=n)) for n, v in DEFAULT_RIDERS)
    return SiteConfig(
        source=None,
        folder=folder,
        title=f"Routes in {folder.name}",
        units="metric",
        card_size="A5",
        large_print=False,
        output=(folder / "site").resolve(),
        base_url="",
        templates=None,
        start=None,
        start_interval=0.0,
        checkpoint_margin=15 * 60.0,
        conditions=Conditions(),
        routes=tuple(RouteConfig(p) for p in gpx),
        riders=riders,
        inputs=(folder, *gpx),
        warnings=(
            f"{folder}: no site.toml; building {len(gpx)} route(s) with the default riders: "
            + ", ".join(f"{n} ({v})" for n, v in DEFAULT_RIDERS),
        ),
    )


def rider_start(config: SiteConfig, index: int) -> datetime | None:
    """Start time of the index-th rider (starts spaced by the event's interval)."""
    if config.start is None:
        return None
    return config.start + timedelta(seconds=index * config.start_interval)
