"""Plans as data files: JSON (everything), CSV (one row per climb and rider, one per
cue and rider), and the route as GPX 1.1 with a waypoint at the foot of every climb
and at each checkpoint."""

from __future__ import annotations

import csv
import io
import json
import math
import re
from collections.abc import Iterable, Sequence
from datetime import datetime
from typing import Any
from xml.sax.saxutils import escape as xml_escape

import numpy as np

from cardgen.plan.model import Notice, Plan
from cardgen.render import format as fmt
from cardgen.render.advice import climb_advice, descent_advice, effort_line
from cardgen.render.notices import notice_text
from cardgen.units import J_PER_KCAL, J_PER_WH, KMH_PER_MS


def _num(x: float | None, digits: int = 3) -> float | None:
    if x is None:
        return None
    value = float(x)
    # + 0.0 turns a negative zero (a loss of -0.0 m on a flat route) into 0.0
    return round(value, digits) + 0.0 if math.isfinite(value) else None


def _notices(notices: Iterable[Notice], units: str = "metric") -> list[dict[str, Any]]:
    """Notices of plan.json: code, severity, text, where (at_m) and, for curves, the
    radius and the speed to slow to in SI units."""
    return [_notice(n, units, km=False) for n in notices]


def _notice(n: Notice, units: str = "metric", *, km: bool) -> dict[str, Any]:
    out: dict[str, Any] = {"code": n.code, "severity": n.severity, "text": notice_text(n, units)}
    if km:
        out["at_km"] = None if n.at is None else n.at / 1000
    else:
        out["at_m"] = _num(n.at, 1)
    if n.code == "curve":  # the figures the card prints, rounded as it rounds them
        out["radius_m"] = fmt.radius_m(n.value("radius"))
        slow_to = fmt.slow_to_kmh(n.value("speed"))
        if km:
            out["slow_to_kmh"] = slow_to
        else:
            out["slow_to_m_s"] = math.floor(slow_to / KMH_PER_MS * 1000) / 1000  # never above the card
    return out


def plan_dict(plan: Plan) -> dict[str, Any]:
    """One rider's plan, JSON-ready, SI units named in the keys."""
    rider = plan.rider
    return {
        "rider": {
            "name": rider.name,
            "vehicle": rider.vehicle.name,
            "cp_w": rider.cp,
            "w_prime_j": rider.w_prime,
            "flat_power_w": rider.flat_power,
            "climb_power_w": rider.climb_power_used,
            "target_speed_m_s": rider.target_speed,
        },
        "pacing": _pacing(plan),
        "totals": {
            "time_s": _num(plan.totals.time, 1),
            "energy_j": _num(plan.totals.energy, 0),
            "food_energy_j": _num(plan.totals.food_energy, 0),
            "battery_j": _num(plan.totals.battery, 0),
            "battery_fits": plan.totals.battery_fits,
            "walk_m": _num(plan.totals.walk_length, 0),
            "assist_between_level": plan.assist_between,
            "ride_passes": plan.ride.passes,
            "ride_converged": plan.ride.converged,
        },
        "climbs": [
            {
                "number": c.number,
                "start_m": _num(c.climb.start_distance, 1),
                "end_m": _num(c.climb.end_distance, 1),
                "gain_m": _num(c.climb.height, 1),
                "avg_grade": _num(c.climb.avg_grade, 4),
                "steepest_grade": _num(c.climb.steepest_grade, 4),
                "fiets": _num(c.climb.score, 2),
                "band": c.climb.band,
                "rider_difficulty": list(c.rider_difficulty),
                "power_for_target_w": _num(c.power_for_target, 1),
                "speed_m_s": _num(c.speed_at_effort, 3),
                "time_s": _num(c.time, 1),
                "time_above_cp_s": _num(c.time_above_cp, 0),
                "w_prime_used_j": _num(c.w_prime_used, 0),
                "w_prime_min_j": _num(c.w_prime_low, 0),
                "battery_left_j": _num(c.battery_left, 0),
                "hold_w": _num(c.rider_power, 1),
                "w_prime_top_j": _num(c.w_prime_top, 0),
                "recovered_after_m": _num(c.recovered_after, 0),
                "advice": climb_advice(c, plan),
                "assist": c.assist_name,
                "warnings": _notices(c.warnings),
            }
            for c in plan.climbs
        ],
        "descents": [
            {
                "number": d.number,
                "start_m": _num(d.descent.start_distance, 1),
                "end_m": _num(d.descent.end_distance, 1),
                "drop_m": _num(d.descent.height, 1),
                "avg_grade": _num(d.descent.avg_grade, 4),
                "coast_speed_m_s": _num(d.coast_speed, 3),
                "max_speed_m_s": _num(d.max_speed, 3),
                "gravity_power_w": _num(d.gravity_power, 0),
                "rider_w": _num(d.rider_power, 1),
                "advice": descent_advice(d, plan),
                "warnings": _notices(d.warnings),
            }
            for d in plan.descents
        ],
        "cues": [
            {
                "distance_m": _num(t.cue.distance, 1),
                "kind": t.cue.kind,
                "text": t.cue.text,
                "elapsed_s": _num(t.elapsed, 0),
            }
            for t in plan.cues
        ],
        "warnings": _notices(plan.warnings),
    }


def _pacing(plan: Plan) -> dict[str, Any] | None:
    """The day's effort and style of a plan (``plan.json``'s ``pacing``)."""
    e = plan.effort
    if e is None:
        return None
    return {
        "style": e.style,
        "mean_power_w": _num(e.mean_power, 1),
        "asked_w": _num(e.asked, 1),
        "ceiling_w": _num(e.ceiling, 1),
        "given": e.given,
        "assumed_duration_s": _num(e.duration, 0),
        # to the centimetre, as other places along the route: to the metre, 6,749.97 m
        # (printed 6.7 km) read as 6,750 m, which rounds to 6.8 km
        "battery_empty_at_m": _num(e.battery_empty_at, 2),
        "assist_off_at_m": _num(e.assist_off_at, 2),
        "text": effort_line(plan),
    }


def _legs(legs: Iterable[Any]) -> list[dict[str, Any]]:
    """A rider's legs between the checkpoints (the card's food and fluid table, from
    :func:`cardgen.plan.fuel.legs`): riding time, and carbohydrate [g] and fluid [L]
    as (low, high) guides for each of the vehicle's ``people`` (2 on a tandem)."""
    return [
        {
            "to": leg.to,
            "end_m": _num(leg.end, 1),
            "time_s": _num(leg.time, 0),
            "carbs_g": [_num(x, 1) for x in leg.carbs] if leg.carbs else None,
            "fluid_l": [_num(x, 3) for x in leg.fluid] if leg.fluid else None,
            "people": leg.people,
        }
        for leg in legs
    ]


def plan_json_text(
    route_name: str,
    plans: Sequence[Plan],
    entries: Sequence[Any] = (),
    windows: Sequence[Any] = (),
    dated: bool = False,
    to_second: bool = False,
    points: Sequence[Any] = (),
) -> str:
    """All riders' plans of one route as JSON text (stable key order), with each
    rider's start, bib, wave and food and fluid legs (from ``entries``), their arrival
    at each checkpoint, feed and marshal point (``points``) and the finish, and the
    checkpoints' windows (docs/contracts.md). Times are local "HH:MM", or ISO 8601
    date-times when the event has a date; to the second ("HH:MM:SS") when the
    event's starts are seconds apart (``to_second``)."""

    def when(moment: datetime | None) -> str | None:
        if moment is None:
            return None
        if dated:
            return moment.isoformat(timespec="seconds" if to_second else "minutes")
        return moment.strftime("%H:%M:%S" if to_second else "%H:%M")

    def arrival(plan: Plan, start: datetime | None, distance: float) -> str | None:
        if start is None:
            return None
        seconds = plan.elapsed_at(distance)
        return when(fmt.moment(start, seconds, to_second)) if np.isfinite(seconds) else None

    dicts = []
    for i, plan in enumerate(plans):
        entry = entries[i] if i < len(entries) else None
        start = entry.start if entry is not None else None
        data = plan_dict(plan)
        data["rider"].update(
            start=when(start), bib=entry.bib if entry else None, wave=entry.wave if entry else None
        )
        data["checkpoints"] = [
            {
                "name": w.checkpoint.name,
                "arrival": arrival(plan, start, w.checkpoint.distance),
                "stop_s": _num(w.checkpoint.stop, 0),
            }
            for w in windows
        ]
        data["points"] = [
            {"name": c.name, "kind": c.kind, "arrival": arrival(plan, start, c.distance)} for c in points
        ]
        data["finish"] = arrival(plan, start, plan.terrain.length)
        data["legs"] = _legs(entry.legs if entry is not None else ())
        dicts.append(data)
    top = {
        "route": route_name,
        "checkpoints": [
            {
                "name": w.checkpoint.name,
                "distance_m": _num(w.checkpoint.distance, 1),
                "opens": when(w.opens),
                "closes": when(w.closes),
            }
            for w in windows
        ],
        "points": [{"name": c.name, "kind": c.kind, "distance_m": _num(c.distance, 1)} for c in points],
        "plans": dicts,
    }
    return json.dumps(top, indent=1, ensure_ascii=False, sort_keys=True) + "\n"


def csv_cell(value: object) -> object:
    """Text that a spreadsheet would run as a formula (starting with = + - @, a tab or
    a carriage return) gets a leading apostrophe, as the OWASP guidance on CSV
    injection recommends; numbers (such as "-6.0") pass unchanged."""
    if isinstance(value, str) and value.startswith(("=", "+", "-", "@", "\t", "\r")):
        try:
            float(value)
        except ValueError:
            return "'" + value
    return value


class _SafeWriter:
    """csv.writer whose text cells cannot start a formula."""

    def __init__(self, out: io.StringIO):
        self._writer = csv.writer(out, lineterminator="\n")

    def writerow(self, row: list[object]) -> None:
        self._writer.writerow([csv_cell(cell) for cell in row])


def climbs_csv_text(plans: Iterable[Plan]) -> str:
    """One row per rider and climb."""
    out = io.StringIO()
    writer = _SafeWriter(out)
    writer.writerow(
        [
            "rider",
            "vehicle",
            "climb",
            "start_km",
            "end_km",
            "gain_m",
            "avg_grade_pct",
            "steepest_grade_pct",
            "fiets",
            "power_for_target_w",
            "speed_kmh",
            "time_min",
            "assist",
            "warnings",
        ]
    )
    for p in plans:
        for c in p.climbs:
            writer.writerow(
                [
                    p.rider.name,
                    p.rider.vehicle.name,
                    c.number,
                    f"{c.climb.start_distance / 1000:.2f}",
                    f"{c.climb.end_distance / 1000:.2f}",
                    f"{c.climb.height:.0f}",
                    f"{c.climb.avg_grade * 100:.1f}",
                    f"{c.climb.steepest_grade * 100:.1f}",
                    f"{c.climb.score:.2f}",
                    f"{c.power_for_target:.0f}",
                    f"{c.speed_at_effort * KMH_PER_MS:.1f}",
                    f"{c.time / 60:.1f}",
                    c.assist_name or "",
                    " | ".join(notice_text(w) for w in c.warnings),
                ]
            )
    return out.getvalue()


#: Characters XML 1.0 does not allow in a document (§2.2): control characters other
#: than tab, line feed and carriage return, and the two non-characters U+FFFE/U+FFFF.
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")
GPX_HEAD = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<gpx xmlns="http://www.topografix.com/GPX/1/1" '
    'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" '
    'xsi:schemaLocation="http://www.topografix.com/GPX/1/1 http://www.topografix.com/GPX/1/1/gpx.xsd" '
    'version="1.1" creator="cardgen">\n'
)


def _xml_text(text: str) -> str:
    """``text`` as XML character data: escaped, without the characters XML 1.0 forbids."""
    return xml_escape(_NOT_XML.sub("", text))


def _wpt(lat: float, lon: float, ele: float, name: str, kind: str, desc: str = "") -> str:
    described = f"    <desc>{_xml_text(desc)}</desc>\n" if desc else ""
    return (
        f'  <wpt lat="{lat:.7f}" lon="{lon:.7f}">\n    <ele>{ele:.1f}</ele>\n'
        f"    <name>{_xml_text(name)}</name>\n{described}    <type>{kind}</type>\n  </wpt>\n"
    )


def route_gpx_text(track: Any, terrain: Any, climbs: Iterable[Any], checkpoints: Iterable[Any]) -> str:
    """GPX 1.1 (the schema's element order: metadata, waypoints, track) of the route's
    (resampled) line, with waypoints at the foot of each climb and at each checkpoint:
    latitude and longitude to 7 decimals (about 1 cm), elevation to 0.1 m. Names come
    from the source file or the site's configuration and are escaped here. Written
    as text directly: building gpxpy's object tree for a 160 km route (16,000
    points) cost more than the rest of the route's exports together;
    ``tests/test_exports.py`` reads the file back with gpxpy."""
    lat, lon, ele = (
        np.asarray(a, dtype=float).tolist() for a in (terrain.lat, terrain.lon, terrain.elevation)
    )
    name = _xml_text(track.name) if track.name else ""
    parts = [GPX_HEAD]
    if name:
        parts.append(f"  <metadata>\n    <name>{name}</name>\n  </metadata>\n")
    for number, climb in enumerate(climbs, 1):
        i = climb.start
        desc = f"{climb.length:.0f} m at {climb.avg_grade * 100:.1f} %, +{climb.height:.0f} m"
        parts.append(_wpt(lat[i], lon[i], ele[i], f"Climb {number}", "climb", desc))
    for checkpoint in checkpoints:
        i = int(round(checkpoint.distance / terrain.step))
        parts.append(_wpt(lat[i], lon[i], ele[i], checkpoint.name, "checkpoint"))
    parts.append("  <trk>\n" + (f"    <name>{name}</name>\n" if name else "") + "    <trkseg>\n")
    parts.extend(
        f'      <trkpt lat="{a:.7f}" lon="{o:.7f}">\n        <ele>{e:.1f}</ele>\n      </trkpt>\n'
        for a, o, e in zip(lat, lon, ele, strict=True)
    )
    parts.append("    </trkseg>\n  </trk>\n</gpx>")
    return "".join(parts)


def route_json(plan: Plan) -> dict[str, Any]:
    """The ``cardgen route --json`` object (docs/contracts.md): one rider on one route,
    in the units its key names carry."""
    kmh = KMH_PER_MS
    totals = plan.totals
    out: dict[str, Any] = _rounded(
        {
            "route": {
                "name": plan.track.name,
                "distance_km": plan.terrain.length / 1000,
                "gain_m": plan.terrain.gain,
                "loss_m": plan.terrain.loss,
                "points": plan.track.points,
            },
            "vehicle": {
                "name": plan.rider.vehicle.name,
                "mass_kg": plan.rider.vehicle.mass,
                "cda_m2": plan.rider.vehicle.cda,
                "crr": plan.rider.vehicle.crr,
            },
            "climbs": [
                {
                    "start_km": c.climb.start_distance / 1000,
                    "end_km": c.climb.end_distance / 1000,
                    "length_m": c.climb.length,
                    "gain_m": c.climb.height,
                    "avg_grade_pct": c.climb.avg_grade * 100,
                    "max_grade_pct": c.climb.steepest_grade * 100,
                    "score": c.climb.score,
                    "band": c.climb.band,
                    "rider_difficulty": list(c.rider_difficulty),
                    "power_for_target_w": c.power_for_target,
                    "speed_at_effort_kmh": c.speed_at_effort * kmh,
                    "time_s": c.time,
                    "assist_level": c.assist_level,
                    "assist": c.assist_name,
                    "warnings": [_notice(w, km=True) for w in c.warnings],
                }
                for c in plan.climbs
            ],
            "descents": [
                {
                    "start_km": d.descent.start_distance / 1000,
                    "end_km": d.descent.end_distance / 1000,
                    "drop_m": d.descent.height,
                    "avg_grade_pct": d.descent.avg_grade * 100,
                    "coast_speed_kmh": d.coast_speed * kmh,
                    "gravity_power_w": d.gravity_power,
                    "warnings": [_notice(w, km=True) for w in d.warnings],
                }
                for d in plan.descents
            ],
            "totals": {
                "time_s": totals.time,
                "energy_kj": totals.energy / 1000,
                "food_kcal": totals.food_energy / J_PER_KCAL,
                "battery_wh": None if totals.battery is None else totals.battery / J_PER_WH,
            },
            # what the text output prints as notes: the route itself (joined gaps,
            # damaged elevation, points left off) and the rider's notices away from
            # the climbs and descents
            "notes": [_notice(w, km=True) for w in plan.warnings],
        }
    )
    return out


def _rounded(tree: Any) -> Any:
    """Every float of a JSON tree to 4 decimals; NaN and infinities become null."""
    if isinstance(tree, dict):
        return {key: _rounded(value) for key, value in tree.items()}
    if isinstance(tree, list):
        return [_rounded(value) for value in tree]
    if isinstance(tree, float):
        return _num(tree, 4)
    return tree


#: The header of ``cardgen route --trace`` (part of the command-line contract).
TRACE_HEADER = (
    "distance_m",
    "elevation_m",
    "grade_pct",
    "rider_w",
    "motor_w",
    "speed_kmh",
    "time_s",
    "w_prime_j",
)


def trace_csv_text(plan: Plan) -> str:
    """One row per simulation node: where, how steep, the rider's and the motor's
    power on the segment that starts there (the last node repeats the last
    segment's), speed, time from the start and the W′ balance on arrival."""
    terrain, ride = plan.terrain, plan.ride
    n = terrain.grade.size
    follows = np.minimum(np.arange(n + 1), max(n - 1, 0))
    motor = getattr(ride, "motor_power", np.zeros(n))
    speed = getattr(ride, "speed", None)
    if speed is None:
        raise ValueError("a trace needs the plan's whole ride, not one lightened for the pages")
    balance = np.concatenate(([plan.rider.w_prime], plan.w_prime_balance))
    columns = (
        terrain.distance,
        terrain.elevation,
        terrain.grade[follows] * 100,
        ride.rider_power[follows],
        np.asarray(motor)[follows],
        speed * KMH_PER_MS,
        ride.elapsed,
        balance,
    )
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(TRACE_HEADER)
    for row in zip(*columns, strict=True):
        writer.writerow(["" if not math.isfinite(x) else f"{x:.4f}".rstrip("0").rstrip(".") for x in row])
    return out.getvalue()
