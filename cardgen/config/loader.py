"""Loading ``site.toml``: the file checked against the schema in one pass, into settings.

Every problem is collected with its file, key and (where it can be found) line, and
reported together; an unknown key or section is a problem that names the closest
known ones. Paths resolve against the config file's folder. The kinds of values are
checked by :mod:`cardgen.config.validators`, the sections by
:class:`~cardgen.config.checker.Checker`; this module adds the rules across keys
(routes and their patterns, riders and their vehicles, waves, the entrants CSV).
"""

from __future__ import annotations

import dataclasses
import math
from datetime import date, datetime
from pathlib import Path
from typing import Any

from cardgen.config.checker import Checker
from cardgen.config.numbers import parse_number, parse_whole
from cardgen.config.patterns import expand, is_pattern, local_path
from cardgen.config.schema import SCHEMA, SECTIONS
from cardgen.errors import CardgenError, ConfigError, close_matches
from cardgen.io.files import read_toml
from cardgen.io.tables import read_csv
from cardgen.profiles.limits import LIMITS
from cardgen.profiles.riders import DEFAULT_ASSIST_LEVEL, Rider, flat_power_for_speed
from cardgen.profiles.vehicles import Vehicle, vehicles_from_tables
from cardgen.route.terrain import MAX_ROUTE_LENGTH
from cardgen.settings import Conditions, RiderConfig, RouteConfig, SiteConfig, Wave
from cardgen.units import J_PER_WH, KMH_PER_MS, ZERO_CELSIUS_K


def load_config(path: Path) -> SiteConfig:
    """Read and check a site.toml; raises ConfigError listing every problem."""
    path = Path(path)
    data, text = read_toml(path, "site configuration", ConfigError)
    return _from_data(data, path, text, path.resolve().parent)


def _from_data(data: dict[str, Any], path: Path | None, text: str, folder: Path) -> SiteConfig:
    check = Checker(path, text)
    for key in data:
        if key not in SECTIONS:
            check.problems.append(
                f"{check.where(key, None, '')[:-1]}: unknown section [{key}]{close_matches(key, SECTIONS)}; "
                f"the sections are {', '.join(SECTIONS)}"
            )
    tables = {
        section: check.table(section, data.get(section, {}), None, folder)
        for section in ("site", "event", "conditions")
    }
    vehicles = _site_vehicles(check, data.get("vehicles", []))
    before = len(check.problems)
    routes = _route_tables(check, data.get("routes", []), folder)
    routes_whole = len(check.problems) == before and all(r["gpx"] is not None for r in routes)
    before = len(check.problems)
    riders_raw = _rider_tables(check, data.get("riders", []), folder)
    riders_whole = len(check.problems) == before  # every entrants file read
    if not riders_raw and riders_whole:  # not when an entrants file was refused
        check.problems.append(
            f'{path}: no [[riders]] entries; add [[riders]] tables, or riders = "entrants.csv"'
        )
    riders = [
        check.table("riders", t, i, folder, vehicles)
        for i, t in enumerate(riders_raw if isinstance(riders_raw, list) else [])
    ]
    route_objects = tuple(
        RouteConfig(
            r["gpx"],
            r["name"],
            r["notes"] or "",
            _checkpoints(check, i, r),
            r["start"],
            r["stop_min"] * 60.0,
            _stops(check, i, r),
            _cue_texts(check, i, r),
            _checkpoints(check, i, r, "feeds"),
            _checkpoints(check, i, r, "marshals"),
        )
        for i, r in enumerate(routes)
        if r["gpx"] is not None
    )
    numbered = [
        (i, rc)
        for i, r in enumerate(riders)
        if (rc := _rider(check, i, r, route_objects if routes_whole else None)) is not None
    ]
    rider_objects = [rc for _, rc in numbered]
    _duplicates(check, [(i, rc.rider.name) for i, rc in numbered], "name", "{n} riders are named {v!r}")
    _duplicates(
        check,
        [(i, rc.bib) for i, rc in numbered if rc.bib is not None],
        "bib",
        "bib {v} is given to {n} riders",
    )
    # a wave may name a rider whose own entry has a problem: that one is reported there;
    # and riders of an entrants file that could not be read are not looked for at all
    entered = {str(r["name"]) for r in riders if r["name"] is not None} if riders_whole else None
    waves = _waves(check, data.get("waves", []), folder, entered, route_objects if routes_whole else None)
    speed_rule = _speed_rule(check, tables["event"])

    site, event, cond = tables["site"], tables["event"], tables["conditions"]
    start = None
    if event["start"] is not None:
        start = datetime.combine(event["date"] or date(2000, 1, 1), event["start"])
    templates = _folder(check, folder, site["templates"], "templates")
    if templates is not None and not templates.is_dir():
        check.problems.append(f"{check.where('site', None, 'templates')}: no folder {templates}")
    output = _folder(check, folder, site["output"], "output")
    if check.problems:
        raise ConfigError(one_or_listed([_tidy(p) for p in check.problems], "in the configuration"))
    conditions = Conditions(
        cond["wind_kmh"] / KMH_PER_MS,
        math.radians(cond["wind_from_deg"]),
        None if cond["temperature_c"] is None else cond["temperature_c"] + ZERO_CELSIUS_K,
    )
    return SiteConfig(
        source=path,
        folder=folder,
        title=site["title"],
        units=site["units"],
        card_size=site["card_size"],
        large_print=site["large_print"],
        output=output or folder / "site",
        base_url=site["base_url"],
        templates=templates,
        start=start,
        start_interval=event["start_interval_min"] * 60.0,
        checkpoint_margin=event["checkpoint_margin_min"] * 60.0,
        conditions=conditions,
        routes=route_objects,
        riders=tuple(rider_objects),
        warnings=tuple(_tidy(w) for w in check.warnings),
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
        notes=tuple(check.notes),
        waves=tuple(waves),
        day=event["date"],
        speed_rule=speed_rule,
        contact=event["contact"] or "",
        emergency=event["emergency"] or "",
    )


#: Most rows read from one entrants file.
MAX_CSV_ROWS = 20_000


def _folder(check: Checker, folder: Path, raw: str | None, key: str) -> Path | None:
    """A folder named in [site], resolved (None when not given or not usable)."""
    if not raw:
        return None
    try:
        return local_path(folder, raw, check.where("site", None, key))
    except ConfigError as exc:
        check.problems.append(str(exc))
        return None


def _rider_tables(check: Checker, raw: Any, folder: Path) -> list[Any]:
    """[[riders]] tables, with riders from spreadsheets: ``riders = "entrants.csv"``, or
    a ``[[riders]]`` table holding only ``csv = "..."``, which may be mixed with others.
    A CSV file has a header row of the same keys as [[riders]] (UTF-8, a byte-order mark
    allowed); ``routes`` lists route names separated by ";"."""
    if isinstance(raw, str):
        raw = [{"csv": raw}]
    if not isinstance(raw, list):
        check.problems.append(f"{check.path}: riders must be [[riders]] tables or a CSV file name")
        return []
    tables: list[Any] = []
    for table in raw:
        if isinstance(table, dict) and set(table) == {"csv"} and isinstance(table["csv"], str):
            try:
                csv_path = local_path(folder, table["csv"], f"{check.path}: riders")
            except ConfigError as exc:
                check.problems.append(str(exc))
                continue
            if csv_path.is_dir():  # riders = "" or "." or a folder's name
                check.problems.append(
                    f"{check.path}: riders = {table['csv']!r} is a folder; give the entrants' CSV file, "
                    'like "entrants.csv"'
                )
                continue
            check.inputs.append(csv_path)
            for row_number, row in _csv_rows(check, csv_path):
                check.csv_rows[("riders", len(tables))] = (csv_path, row_number)
                tables.append(row)
        else:
            tables.append(table)
    return tables


def _csv_rows(check: Checker, path: Path) -> list[tuple[int, dict[str, Any]]]:
    """The rows of an entrants file as [[riders]] tables, numbers as numbers."""
    try:
        header, found, over = read_csv(path, "CSV entrants", ConfigError, MAX_CSV_ROWS)
    except ConfigError as exc:
        check.problems.append(str(exc))
        return []
    rows: list[tuple[int, dict[str, Any]]] = []
    known = SCHEMA["riders"]
    for mark, called in ((";", "semicolons"), ("\t", "tabs")):
        if len(header) == 1 and mark in header[0]:
            check.problems.append(
                f"{path}:row 1: the columns are separated by {called}, not commas (some spreadsheets save "
                "CSV so in some languages); save it again as CSV with commas between the columns"
            )
            return []
    unknown = [f"column {i}{close_matches(c, known)}" for i, c in enumerate(header, 1) if c not in known]
    missing = [key for key, spec in known.items() if spec.required and key not in header]
    no_column = f"no column {' or '.join(missing)}" if missing else ""
    if unknown:  # by position: the file may be anything (/etc/passwd), its text is not repeated
        check.problems.append(  # with the missing column: a misspelt "name" is one mistake
            f"{path}:row 1: {plural(len(unknown), 'unknown column')} ({', '.join(unknown[:5])}"
            f"{', …' if len(unknown) > 5 else ''}){' and ' + no_column if missing else ''}; "
            f"the header row names the keys of [[riders]]: {', '.join(known)}"
        )
    elif missing:
        check.problems.append(f"{path}:row 1: {no_column}; the header row names the columns")
    if over:
        check.problems.append(over)
    if unknown or missing:  # the rows cannot be read as riders: one message for the file, not one per row
        return []
    for number, row in enumerate(found, 2):
        if number > MAX_CSV_ROWS + 1:
            check.problems.append(f"{path}: more than {MAX_CSV_ROWS:,} rows; split the file")
            break
        table: dict[str, Any] = {}
        for key, cell in row.items():
            if key not in known or cell is None or not cell.strip():
                continue
            table[key] = _csv_value(cell.strip(), known[key].kind)
        rows.append((number, table))
    return rows


def _csv_value(cell: str, kind: str) -> Any:
    """A spreadsheet cell as the kind of value its key takes (left as text when it is
    not one: the check then names the row and column)."""
    if kind in ("number", "int"):
        number = parse_number(cell) if kind == "number" else parse_whole(cell)
        return cell if number is None else number  # text: the check names its row, column and the format
    if kind == "list":
        return [part.strip() for part in cell.split(";") if part.strip()]
    return cell


def _duplicates(check: Checker, values: list[tuple[int, Any]], key: str, words: str) -> None:
    """One problem per value given to more than one rider, naming where each is (the
    CSV row, or the site.toml line); linear in the riders."""
    places: dict[Any, list[int]] = {}
    for index, value in values:
        places.setdefault(value, []).append(index)
    for value, where in places.items():
        if len(where) > 1:
            more = f" (and {len(where) - 3} more)" if len(where) > 3 else ""
            check.problems.append(
                f"{_places(check, where[:3], key)}{more}: {words.format(v=value, n=_count_word(len(where)))}; "
                f"give each a different {key}"
            )


def _count_word(n: int) -> str:
    return {2: "two", 3: "three"}.get(n, f"{n:,}")


def _places(check: Checker, indexes: list[int], key: str) -> str:
    """Where riders are: "entrants.csv:rows 4, 5, column bib" when one spreadsheet holds
    them all, else each place in turn."""
    rows = [check.csv_rows.get(("riders", i)) for i in indexes]
    files = {r[0] for r in rows if r is not None}
    if None not in rows and len(files) == 1:
        return f"{files.pop()}:rows {', '.join(str(r[1]) for r in rows if r)}, column {key}"
    return "; ".join(check.where("riders", i, key).rstrip(":") for i in indexes)


def _stops(check: Checker, index: int, route: dict[str, Any]) -> tuple[float, ...]:
    """``stops_min`` of one route, in seconds: numbers in range, one per checkpoint."""
    raw = route.get("stops_min")
    if not raw:
        return ()
    where = check.where("routes", index, "stops_min")
    low, high = LIMITS["stop_min"].low, LIMITS["stop_min"].high
    if not all(isinstance(x, int | float) and low <= x <= high for x in raw):
        check.problems.append(f"{where} must list minutes between {low:g} and {high:g}, like [10, 0, 5]")
        return ()
    listed = route.get("checkpoints") or ()
    if listed and len(raw) != len(listed):  # none listed: the GPX's checkpoints, counted when it is read
        check.problems.append(
            f"{where} has {len(raw)} {'entry' if len(raw) == 1 else 'entries'} for {plural(len(listed), 'checkpoint')} listed; "
            "give one stop per checkpoint "
            "in the same order (or stop_min for the same stop at all)"
        )
        return ()
    return tuple(float(x) * 60.0 for x in raw)


#: Farthest distance along a route that config can name [km] (the longest route planned).
MAX_KM = MAX_ROUTE_LENGTH / 1000.0


def _checkpoints(
    check: Checker, index: int, route: dict[str, Any], key: str = "checkpoints"
) -> tuple[str | float, ...]:
    """``checkpoints`` (or ``feeds``, ``marshals``: ``key``) of one route: waypoint
    names, and distances [m] from numbers in km, which must be finite (whether they lie
    on the route is checked with the route)."""
    out: list[str | float] = []
    for x in route.get(key) or ():
        if isinstance(x, int | float) and not isinstance(x, bool):
            if not math.isfinite(x):
                check.problems.append(
                    f"{check.where('routes', index, key)}: {x!r} is not a distance along the route; "
                    "give km, like 42.5, or a waypoint's name"
                )
                continue
            out.append(x * 1000.0)
        else:
            out.append(x)
    return tuple(out)


def _cue_texts(check: Checker, index: int, route: dict[str, Any]) -> tuple[tuple[float, str], ...]:
    """``cue_texts`` of one route: entries "km = text", the distance in km written as
    :data:`cardgen.config.numbers.FORMAT` says, within 0…:data:`MAX_KM`."""
    out = []
    for entry in route.get("cue_texts") or ():
        km, sep, text = str(entry).partition("=")
        number = parse_number(km.strip().removesuffix("km"))
        where = -1.0 if number is None or not 0 <= number <= MAX_KM else number * 1000.0
        if not sep or where < 0 or not text.strip():
            check.problems.append(
                f'{check.where("routes", index, "cue_texts")}: {str(entry)[:60]!r} is not like "12.1 = Left at the '
                f'old mill" (the cue\'s distance in km between 0 and {MAX_KM:,.0f}, "=", the words)'
            )
            continue
        out.append((where, text.strip()[:200]))
    return tuple(out)


def _speed_rule(check: Checker, event: dict[str, Any]) -> tuple[float, float] | None:
    """[event] min_kmh and max_kmh: both or neither, slowest below fastest."""
    slowest, fastest = event.get("min_kmh"), event.get("max_kmh")
    if slowest is None and fastest is None:
        return None
    if slowest is None or fastest is None or slowest >= fastest:
        check.problems.append(
            f"{check.path}: [event] min_kmh and max_kmh go together, the slowest below the fastest "
            "(like min_kmh = 15, max_kmh = 30)"
        )
        return None
    return slowest / KMH_PER_MS, fastest / KMH_PER_MS


def _waves(
    check: Checker, raw: Any, folder: Path, riders: set[str] | None, routes: tuple[RouteConfig, ...] | None
) -> list[Wave]:
    """The [[waves]] tables; every rider and route they name must exist (routes are
    not checked, None, while a [[routes]] entry has a problem of its own; riders, None,
    while an entrants file could not be read)."""
    if not isinstance(raw, list):
        check.problems.append(f"{check.path}: waves must be [[waves]] tables")
        return []
    route_names = (
        None if routes is None else {n for rc in routes for n in (rc.gpx.name, rc.gpx.stem, rc.name) if n}
    )
    waves = []
    for i, table in enumerate(raw):
        w = check.table("waves", table, i, folder)
        if isinstance(table, dict) and not (w["riders"] or w["routes"]):
            check.problems.append(
                f"{check.where('waves', i, 'name')}: the wave names neither riders nor routes; "
                'add riders = ["..."] or routes = ["..."] (a wave never takes everyone)'
            )
        for kind, names, known in (
            ("rider", w["riders"] or (), riders),
            ("route", w["routes"] or (), route_names),
        ):
            for name in names:
                if known is not None and str(name) not in known:
                    listed = f"; the routes are {', '.join(sorted(known))}" if kind == "route" else ""
                    check.problems.append(
                        f"{check.where('waves', i, kind + 's')} no {kind} {name!r}"
                        f"{close_matches(str(name), known)}{listed}"
                    )
        if w["name"] is not None and w["start"] is not None:
            waves.append(
                Wave(
                    w["name"],
                    w["start"],
                    w["interval_min"] * 60.0,
                    tuple(str(x) for x in (w["routes"] or ())),
                    tuple(str(x) for x in (w["riders"] or ())),
                )
            )
    return waves


def _tidy(message: str) -> str:
    """A message at a CSV cell: its place ends in ":" already ("row 2, column bib:")."""
    return message.replace(":: ", ": ").replace(": =", " =")


def one_or_listed(problems: list[str], where: str) -> str:
    """One problem on its own line; several counted, then one a line, indented."""
    if len(problems) == 1:
        return problems[0]
    return f"{plural(len(problems), 'problem')} {where}:\n  " + "\n  ".join(problems)


def plural(count: int, word: str) -> str:
    """ "1 rider", "2 riders"."""
    return f"{count} {word}" if count == 1 else f"{count} {word}s"


def _site_vehicles(check: Checker, raw: Any) -> dict[str, Vehicle]:
    """The site's own [[vehicles]]: each a table with a name and the keys of a vehicle
    profile file (``base = "..."`` starts from a built-in)."""
    if not isinstance(raw, list):
        check.problems.append(f"{check.path}: vehicles must be [[vehicles]] tables, not {type(raw).__name__}")
        return {}
    found: dict[str, Vehicle] = {}
    for i, table in enumerate(raw):
        where = check.where("vehicles", i, "")[:-1]
        if not isinstance(table, dict) or not isinstance(table.get("name"), str) or not table["name"]:
            check.problems.append(f'{where}: each [[vehicles]] table needs a name = "..."')
            continue
        name = table["name"]
        try:
            found.update(
                vehicles_from_tables(
                    {name: {k: v for k, v in table.items() if k != "name"}},
                    where,
                    f"site file {check.path.name if check.path else 'settings'}",
                )
            )
        except CardgenError as exc:
            check.problems.append(str(exc))
    return found


def _route_tables(check: Checker, raw: Any, folder: Path) -> list[dict[str, Any]]:
    """[[routes]] tables, or one pattern string: every GPX file it matches. A table's
    ``gpx`` may be a pattern too; a file named by a table of its own takes that
    table's settings wherever a pattern also matched it."""
    if isinstance(raw, str):
        raw = [{"gpx": raw}]
    if not isinstance(raw, list) or not raw:
        check.problems.append(f'{check.path}: no routes; add [[routes]] tables, or routes = "routes/*.gpx"')
        return []
    explicit: dict[Path, dict[str, Any]] = {}
    expanded: list[tuple[Path | None, int, Any]] = []
    for i, table in enumerate(raw):
        pattern = table.get("gpx") if isinstance(table, dict) else None
        where = check.where("routes", i, "gpx")
        try:
            if isinstance(pattern, str) and is_pattern(pattern):
                matches = expand(folder, pattern, where)
                if not matches:
                    check.problems.append(f"{where}: {pattern!r} matches no .gpx file in {folder}")
                expanded.extend((m, i, {**table, "gpx": str(m)}) for m in matches)
                continue
            resolved = local_path(folder, pattern, where) if isinstance(pattern, str) else None
        except ConfigError as exc:
            check.problems.append(str(exc))
            continue
        if resolved is not None:
            explicit[resolved] = table
        expanded.append((resolved, i, table))
    tables, seen = [], set()
    for resolved, i, table in expanded:
        if resolved is not None:
            if resolved in seen:
                continue
            seen.add(resolved)
            table = explicit.get(resolved, table)
        tables.append(check.table("routes", table, i, folder))
    return tables


def _rider(
    check: Checker, i: int, r: dict[str, Any], routes: tuple[RouteConfig, ...] | None
) -> RiderConfig | None:
    """One [[riders]] table as a rider on their vehicle; problems and the model's
    adjustments are recorded on ``check``. ``routes`` is None while a [[routes]] entry
    has a problem of its own: the routes riders name are then not checked (the route
    they name may be the broken one, and one mistake is one message)."""
    vehicle: Vehicle | None = r["vehicle"]
    if vehicle is None or r["name"] is None:
        return None
    name = r["name"]
    vehicle = _fitted_vehicle(check, i, r, vehicle)
    given: dict[str, Any] = {}
    for key, attr in (
        ("cp_w", "cp"),
        ("w_prime_kj", "w_prime"),
        ("flat_w", "flat_power"),
        ("climb_w", "climb_power"),
        ("climb_share", "climb_share"),
        ("target_kmh", "target_speed"),
    ):
        if r[key] is not None:
            given[attr] = r[key] * LIMITS[key].to_si
    if r["assist_between_climbs"] is not None and vehicle.motor is not None:
        given["assist_between_climbs"] = r["assist_between_climbs"]
    if r["pacing"] is not None:
        given["pacing"] = r["pacing"]
    if not _flat_power(check, i, r, vehicle, given):
        return None
    every = routes or ()
    unknown = [x for x in (r["routes"] or ()) if not any(_names_route(str(x), rc) for rc in every)]
    for x in unknown if routes is not None else ():
        known = sorted({n for rc in every for n in (rc.gpx.name, rc.gpx.stem, rc.name) if n})
        parts = [p.strip() for p in str(x).split(",")]
        if len(parts) > 1 and all(any(_names_route(p, rc) for rc in every) for p in parts):
            check.problems.append(  # a spreadsheet cell "a,b": the separator is ";"
                f"{check.where('riders', i, 'routes')}: no route {x!r}; separate routes with ';', not ','"
            )
            continue
        check.problems.append(
            f"{check.where('riders', i, 'routes')}: no route {x!r}{close_matches(str(x), known)}; "
            f"the routes are {', '.join(known)}"
        )
    try:
        rider = Rider.for_vehicle(vehicle, name=name, **given)
    except CardgenError as exc:
        check.problems.append(f"{check.where('riders', i, 'name')}: {exc}")
        return None
    if rider.climb_power_used < rider.climb_power - 0.5 and r["climb_w"] is not None:
        check.notes.append(
            f"rider {name!r}: climb_w {rider.climb_power:.0f} W is above CP × "
            f"{1 + rider.climb_share:.2f}; the plans hold at most {_watts(rider.climb_power_used, 'down')}, "
            "as the cards print it (raise climb_share to allow more)"
        )
    return RiderConfig(rider, tuple(str(x) for x in (r["routes"] or ())), r["start"], r["bib"])


def _flat_power(check: Checker, i: int, r: dict[str, Any], vehicle: Vehicle, given: dict[str, Any]) -> bool:
    """The flat power of a [[riders]] table into ``given``: ``flat_w``, or the power
    ``flat_kmh`` takes on the rider's vehicle; False after a problem, reported at the
    key that was given (a flat power above a given CP is one)."""
    name = r["name"]
    if r["flat_kmh"] is None:
        if "cp" in given and given.get("flat_power", 0.0) > given["cp"]:
            check.problems.append(
                f"{check.where('riders', i, 'flat_w')}: {r['flat_w']:g} W on the flat is above the CP "
                f"({r['cp_w']:g} W), which cannot be held for long; give at most {r['cp_w']:g} W"
            )
            return False
        return True
    if r["flat_w"] is not None:
        check.problems.append(f"{check.where('riders', i, 'flat_kmh')}: give flat_kmh or flat_w, not both")
        return False
    level = given.get("assist_between_climbs", DEFAULT_ASSIST_LEVEL) if vehicle.motor is not None else 0
    try:
        watts = flat_power_for_speed(vehicle, r["flat_kmh"] * LIMITS["flat_kmh"].to_si, level)
    except CardgenError as exc:
        check.problems.append(f"{check.where('riders', i, 'assist_between_climbs')}: {exc}")
        return False
    given["flat_power"] = watts
    said = (
        f"{r['flat_kmh']:g} km/h on the flat takes about {_watts(watts)} on the vehicle {vehicle.name!r} "
        f"in still air{_with_assist(vehicle, level)}"
    )
    if "cp" in given and watts > given["cp"]:
        check.problems.append(
            f"{check.where('riders', i, 'flat_kmh')}: {said}, above the CP ({r['cp_w']:g} W), "
            "which cannot be held for long; give a lower flat_kmh or a higher cp_w"
        )
        return False
    check.notes.append(f"rider {name!r}: {said}; the plans use that as the flat power")
    return True


def _watts(watts: float, rounding: str = "nearest") -> str:
    """A rider's power as the cards print it (``render.format.power``): to the nearest
    5 W, or with ``rounding="down"`` for a limit ("hold 250 W", never more than the
    plan holds)."""
    if rounding == "down":
        return f"{5 * math.floor(watts / 5 + 1e-9):.0f} W"
    return f"{5 * round(watts / 5):.0f} W"


def _with_assist(vehicle: Vehicle, level: int) -> str:
    """ ", with assist level N" for a vehicle with a motor, else nothing."""
    if vehicle.motor is None:
        return ""
    return f" with assist level {level}" if level else " with the motor off"


def _fitted_vehicle(check: Checker, i: int, r: dict[str, Any], vehicle: Vehicle) -> Vehicle:
    """The rider's vehicle with their own body mass, load and battery."""
    changes: dict[str, Any] = {}
    if r["body_mass_kg"] is not None:
        changes["rider_mass"] = float(r["body_mass_kg"])
    if r["load_kg"] is not None:
        changes["vehicle_mass"] = vehicle.vehicle_mass + float(r["load_kg"])
    if r["battery_wh"] is not None:
        if vehicle.motor is None:
            check.problems.append(
                f"{check.where('riders', i, 'battery_wh')}: the vehicle {vehicle.name!r} has no motor"
            )
        else:
            changes["battery"] = float(r["battery_wh"]) * J_PER_WH
    if r["assist_between_climbs"] is not None and vehicle.motor is None:
        check.warnings.append(
            f"{check.where('riders', i, 'assist_between_climbs')}: the vehicle {vehicle.name!r} "
            "has no motor; the assist level is ignored"
        )
    return dataclasses.replace(vehicle, **changes) if changes else vehicle


def _names_route(name: str, route: RouteConfig) -> bool:
    return name in (route.gpx.name, route.gpx.stem, route.name)


def rider_start(
    config: SiteConfig, index: int, route: RouteConfig | None = None
) -> tuple[datetime | None, str | None]:
    """The index-th rider's start on ``route`` (the first route when None), and the
    name of their wave (or None): one look-up in :func:`cardgen.plan.starts.event_starts`,
    which computes every start of the event at once (use it directly for many riders)."""
    from cardgen.plan.starts import event_starts

    k = config.routes.index(route) if route is not None else 0
    start = event_starts(config).of(index, k)
    return start.at, start.wave
