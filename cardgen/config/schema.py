"""The schema of ``site.toml``: every section and key, its kind, default and range,
and the README's table of keys made from it."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from cardgen.profiles.limits import LIMITS
from cardgen.profiles.riders import PACING_STYLES

CARD_SIZES = ("A5", "A4", "pocket")
#: Years an event may be in: keeps every start, arrival and window a real date.
EVENT_YEARS = (1900, 2200)
#: Longest base_url: its QR code must stay readable on a card.
MAX_URL_LENGTH = 200
UNITS = ("metric", "imperial")


@dataclass(frozen=True)
class Spec:
    """One key of the schema: its kind, whether it must be given, its default, and for
    numbers the allowed range."""

    kind: str  # "str", "bool", "number", "int", "choice", "list", "date", "time", "path", "vehicle", "url"
    required: bool = False
    default: Any = None
    limit: str = ""  # for numbers: the key of cardgen.profiles.limits.LIMITS with the range
    choices: tuple[Any, ...] = ()
    help: str = ""

    @property
    def about(self) -> str:
        """What the key is, for messages."""
        return self.help or (LIMITS[self.limit].help if self.limit else "")


SCHEMA = {
    "site": {
        "title": Spec("str", default="Route cards", help="the site's title"),
        "units": Spec("choice", default="metric", choices=UNITS, help="units on pages and cards"),
        "card_size": Spec("choice", default="A5", choices=CARD_SIZES, help="paper of the rider cards"),
        "large_print": Spec("bool", default=False, help="cards in 14 pt type"),
        "output": Spec(
            "str", default="site", help="output folder, relative to this file (`cardgen check` names it)"
        ),
        "base_url": Spec("url", default="", help="the site's address, for QR codes on cards"),
        "templates": Spec("str", default="", help="a folder of templates that override cardgen's"),
    },
    "event": {
        "date": Spec("date", help='like "2027-04-18"'),
        "start": Spec("time", help='like "08:30"'),
        "start_interval_min": Spec("number", default=0.0, limit="start_interval_min"),
        "checkpoint_margin_min": Spec("number", default=15.0, limit="checkpoint_margin_min"),
        "contact": Spec("str", default="", help="the organiser's contact, printed on every card"),
        "emergency": Spec("str", default="", help="emergency numbers, printed on every card"),
        "min_kmh": Spec(
            "number", limit="min_kmh", help="checkpoints close at the last start + distance / this speed"
        ),
        "max_kmh": Spec(
            "number", limit="max_kmh", help="checkpoints open at the first start + distance / this speed"
        ),
    },
    "conditions": {
        "wind_kmh": Spec("number", default=0.0, limit="wind_kmh"),
        "wind_from_deg": Spec("number", default=0.0, limit="wind_from_deg"),
        "temperature_c": Spec("number", limit="temperature_c"),
    },
    "routes": {
        "gpx": Spec(
            "path",
            required=True,
            help='a GPX file, relative to this file, or a pattern like "routes/*.gpx" (routes = "..." alone also works)',
        ),
        "name": Spec(
            "str",
            help="the route's name on pages and cards (unset: the GPX's track name, else its file name); riders and waves name "
            "a route by this or by its GPX file name",
        ),
        "notes": Spec("str", default="", help="the organiser's note on the route, on its page and its cards"),
        "checkpoints": Spec("list", help="waypoint names or distances in km"),
        "start": Spec("time", help='this route\'s own first start, like "09:00"'),
        "stop_min": Spec("number", default=0.0, limit="stop_min", help="planned stop at each checkpoint"),
        "stops_min": Spec(
            "list",
            help="planned stop at each checkpoint listed (none listed: the GPX's, in route order), in minutes",
        ),
        "feeds": Spec(
            "list", help="feed points (waypoint names or distances in km): on the day sheet with their stock"
        ),
        "marshals": Spec(
            "list", help="marshal points (waypoint names or distances in km): on the day sheet, no stock"
        ),
        "cue_texts": Spec(
            "list", help='the organiser\'s words for cues, like ["12.1 = Left at the old mill"] (km = text)'
        ),
    },
    "waves": {
        "name": Spec("str", required=True, help="the wave's name"),
        "start": Spec("time", required=True, help='its first start, like "08:00"'),
        "interval_min": Spec(
            "number", default=0.0, limit="start_interval_min", help="time between its riders"
        ),
        "routes": Spec(
            "list", help="riders on these routes start in this wave (route names or GPX file names)"
        ),
        "riders": Spec("list", help="these riders (by name) start in this wave"),
    },
    "riders": {
        "name": Spec("str", required=True, help="the rider's name, printed on the card; one rider, one name"),
        "vehicle": Spec("vehicle", required=True, help="a built-in vehicle or a .toml profile"),
        "cp_w": Spec("number", limit="cp_w"),
        "w_prime_kj": Spec("number", limit="w_prime_kj"),
        "flat_w": Spec("number", limit="flat_w"),
        "climb_w": Spec("number", limit="climb_w"),
        "climb_share": Spec("number", limit="climb_share"),
        "target_kmh": Spec("number", limit="target_kmh"),
        "flat_kmh": Spec("number", limit="flat_kmh"),
        "body_mass_kg": Spec("number", limit="body_mass_kg"),
        "load_kg": Spec("number", limit="load_kg"),
        "battery_wh": Spec("number", limit="battery_wh", help="battery fitted (e-assist vehicles)"),
        "assist_between_climbs": Spec("int", limit="assist_between_climbs"),
        "pacing": Spec(
            "choice",
            choices=PACING_STYLES,
            help="best: spend W′ where it saves most time; steady: never above CP (default: steady on handcycles)",
        ),
        "start": Spec("time", help='this rider\'s own start, like "08:42"'),
        "bib": Spec("int", limit="bib"),
        "routes": Spec(
            "list",
            help="only these routes (GPX file names or route names); unset: every route, a ride on each",
        ),
    },
}
TABLE_ARRAYS = {"routes", "riders", "vehicles", "waves"}
#: Keys that were renamed: the old name is refused with a pointer to the new.
RENAMED = {"cruise_level": "assist_between_climbs"}
#: Sections of site.toml, [[vehicles]] included (its keys are those of a vehicle profile).
SECTIONS = (*SCHEMA, "vehicles")


def reference_table() -> str:
    """Every key of site.toml as a Markdown table (the README's reference), made from
    the schema and the table of limits so that it cannot drift from what is checked."""
    rows = ["| section | key | kind | range or choices | default | what it is |", "|---|---|---|---|---|---|"]
    for section, keys in SCHEMA.items():
        shown = f"[[{section}]]" if section in TABLE_ARRAYS else f"[{section}]"
        for key, spec in keys.items():
            if spec.limit:
                limit = LIMITS[spec.limit]
                span = f"{limit.low:g}…{limit.high:g}" + (f" {limit.unit}" if limit.unit else "")
            elif spec.choices:
                span = ", ".join(spec.choices)
            else:
                span = ""
            default = (
                "required" if spec.required else ("" if spec.default in (None, "") else f"{spec.default}")
            )
            rows.append(f"| {shown} | `{key}` | {spec.kind} | {span} | {default} | {spec.about} |")
    rows.append(
        '| (top level) | `riders = "entrants.csv"` | CSV file | | | riders from a spreadsheet: a header row of '
        'the [[riders]] keys (`routes` separated by `;`); or `csv = "..."` alone in a [[riders]] table, to mix |'
    )
    rows.append(
        "| [[vehicles]] | `name`, `base` and any key of a vehicle profile | table | | | "
        "a vehicle of this site, started from a built-in one (`cardgen vehicles --json` lists the keys) |"
    )
    return "\n".join(rows)
