"""The organiser's day sheet, one CSV and one PDF for the event (``day-sheet.csv``,
``day-sheet.pdf``): each checkpoint's, feed point's and marshal point's timetable,
the stock where riders get food, and the sweep, from :mod:`cardgen.plan.day`."""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable
from datetime import datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any

from cardgen.plan.day import STOCK_MARGIN, SWEEP_DELAY, SWEEP_SPEED, PointDay, fluid_band, supplies_food
from cardgen.render import format as fmt
from cardgen.units import ZERO_CELSIUS_K

if TYPE_CHECKING:
    import jinja2

    from cardgen.settings import SiteConfig

#: The CSV's columns, in order.
COLUMNS = (
    "route",
    "checkpoint",
    "kind",
    "km",
    "opens",
    "closes",
    "riders",
    "people",
    "first",
    "last",
    "per_15_min",
    "stop_min",
    "carbs_g",
    "fluid_l",
    "last_leaves",
    "sweep",
)


#: The word for each kind of point on the printed sheet.
KIND_WORDS = {"checkpoint": "checkpoint", "feed": "feed point", "marshal": "marshal point"}


def day_rows(route: str, points: Iterable[PointDay], to_second: bool) -> list[dict[str, Any]]:
    """One route's rows of the day sheet (``points``: the days of its checkpoints,
    feed and marshal points, from :func:`cardgen.plan.day.day_points`), as text and
    numbers (they travel in the build's manifest, so that a route reused from the
    last build keeps its rows)."""

    def clock(moment: datetime | None) -> str:
        return fmt.start_clock(moment, to_second) if moment is not None else ""

    rows = []
    for p in points:
        rows.append(
            {
                "route": route,
                "checkpoint": p.name,
                "kind": p.kind,
                "km": round(p.distance / 1000, 2),
                # the sheet prints this through the one distance formatter, as the cards do
                # (12149.6 m: 12.1 km; the CSV's 12.15 km rounded again gave 12.2)
                "distance_m": p.distance,
                "opens": clock(p.opens),
                "closes": clock(p.closes),
                "riders": p.riders,
                "people": p.people,
                "first": clock(p.first),
                "last": clock(p.last),
                # a quarter hour has no seconds, whatever the starts carry
                "per_15_min": [[fmt.start_clock(q), n] for q, n in p.quarters],
                "stop_min": round(p.stop / 60),
                # what to stock rounds up: never below the riders' plans' sum
                "carbs_g": None if p.carbs_g is None else int(fmt.need(p.carbs_g, 1)),
                "fluid_l": None if p.fluid_l is None else fmt.need(p.fluid_l, 0.1),
                "food": supplies_food(p),
                "last_leaves": clock(p.last_leaves),
                "sweep": clock(p.sweep),
            }
        )
    return rows


def day_csv_text(rows: list[dict[str, Any]]) -> str:
    """The day sheet as CSV text, one row per point ("per_15_min" as "07:00=3;
    07:15=5"; a marshal point's stock cells empty)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(COLUMNS)
    for row in rows:
        cells = dict(row, per_15_min="; ".join(f"{q}={n}" for q, n in row["per_15_min"]))
        writer.writerow([_cell(cells[c]) for c in COLUMNS])
    return buffer.getvalue()


def _cell(value: object) -> object:
    """Text that a spreadsheet would run as a formula gets a leading apostrophe."""
    if isinstance(value, str) and value.startswith(("=", "+", "-", "@", "\t", "\r")):
        return "'" + value
    return "" if value is None else value


def assumptions(temperature_c: float | None, units: str = "metric") -> dict[str, Any]:
    """What the sheet states beside its numbers."""
    low, high = fluid_band(temperature_c)
    return {
        "margin_pct": round(STOCK_MARGIN * 100),
        "fluid_band": f"{low:.1f}–{high:.1f} L an hour",
        "temperature": "not given (the middle band)" if temperature_c is None else f"{temperature_c:.0f} °C",
        "sweep": f"a ridden sweep at {fmt.speed(SWEEP_SPEED, units)} average, leaving {SWEEP_DELAY / 60:.0f} min "
        "after the last start and never passing the last rider",
    }


def day_sheet_files(
    env: jinja2.Environment, config: SiteConfig, rows: list[dict[str, Any]], folder: Path, pdf: bool
) -> dict[str, str | bytes]:
    """``day-sheet.csv`` and (with PDFs) ``day-sheet.pdf``, by name; ``folder`` is
    where the build puts them (the PDF's links point there)."""
    # rows of a route reused from a build before feed and marshal points: checkpoints
    rows = [
        {
            "kind": "checkpoint",
            "food": bool(r.get("stop_min")),
            "people": r.get("riders"),
            "distance_m": r["km"] * 1000,
            **r,
        }
        for r in rows
    ]
    files: dict[str, str | bytes] = {"day-sheet.csv": day_csv_text(rows)}
    if not pdf:
        return files
    from cardgen.render.pdf import pdf_bytes

    temperature = config.conditions.temperature
    celsius = None if temperature is None else temperature - ZERO_CELSIUS_K
    peak = max((n for r in rows for _, n in r["per_15_min"]), default=1) or 1
    html = env.get_template("day-sheet.html").render(
        title=config.title,
        rows=rows,
        peak=peak,
        said=assumptions(celsius, config.units),
        units=config.units,
        kinds=KIND_WORDS,
    )
    files["day-sheet.pdf"], _ = pdf_bytes(html, folder)
    return files
