"""GPX 1.0 / 1.1 → numpy arrays, in one streaming pass over untrusted XML.

The only module that touches GPX. GPX is untrusted: a first expat pass reads only the
prolog and refuses any document type declaration (the only place where entities,
and so entity expansion and external references, can be declared) and any root
element other than <gpx>; then ElementTree's C parser streams the points. Size and
point count are bounded. Trackpoints are collected as strings in one pass and
converted to arrays at once; no object is built per point.
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any
from xml.etree.ElementTree import ParseError, iterparse
from xml.parsers import expat

import numpy as np

from cardgen.errors import GpxError
from cardgen.route.geodesy import cumulative_distance
from cardgen.units import Floats

#: Largest GPX file read [bytes]: 100 MiB holds about 800,000 plain trackpoints,
#: over 8,000 km at one point every 10 m.
MAX_FILE_BYTES = 100 * 1024 * 1024
#: Most points read from one file (track + route + waypoints).
MAX_POINTS = 2_000_000
#: Most waypoints and named route points: a cue sheet of more is no use on a card, and
#: placing each on the route costs time.
MAX_NAMED_POINTS = 2_000
#: Longest run of bytes inside one tag or between two tags: expat's time grows with
#: the square of a single token's length, and no GPX field needs more.
MAX_TOKEN_BYTES = 1 << 20
#: Character encodings read (those expat decodes itself); anything else is refused.
ENCODINGS = ("utf-8", "utf8", "utf-16", "utf16", "us-ascii", "ascii", "iso-8859-1", "latin-1", "latin1")
#: Elevations outside this range [m] are treated as missing (the Dead Sea shore is
#: at −430 m, the highest paved roads near 5,800 m).
ELEVATION_RANGE = (-500.0, 9000.0)

_NAMESPACES = ("", "{http://www.topografix.com/GPX/1/0}", "{http://www.topografix.com/GPX/1/1}")
_LOCAL = {
    ns + name: name
    for ns in _NAMESPACES
    for name in (
        "gpx",
        "metadata",
        "trk",
        "trkseg",
        "trkpt",
        "rte",
        "rtept",
        "wpt",
        "ele",
        "time",
        "name",
        "desc",
        "type",
        "link",
        "url",
        "cmt",
    )
}


@dataclass(frozen=True)
class Waypoint:
    """A named point of a GPX file (``<wpt>`` or a named ``<rtept>``). Text is untrusted."""

    lat: float
    lon: float
    elevation: float
    name: str
    description: str
    kind: str
    link: str


@dataclass(frozen=True)
class Gap:
    """A jump between two track segments: ``index`` of the first point after it,
    ``length`` [m] of the straight line across it, ``rise`` [m] of the elevation jump."""

    index: int
    length: float
    rise: float


#: A jump between segments longer than this [m] (and than a few point spacings) is a gap …
GAP_LENGTH = 25.0
#: … and so is one whose elevation jump is steeper than this grade over its length and
#: more than GAP_RISE metres: no road climbs a third of its length in one step.
GAP_GRADE = 0.35
GAP_RISE = 5.0


def _gaps(lat: np.ndarray, lon: np.ndarray, elevation: np.ndarray, starts: list[int]) -> tuple[Gap, ...]:
    """The segment boundaries that are gaps (see :data:`GAP_LENGTH`, :data:`GAP_GRADE`)."""
    inside = sorted({i for i in starts if 0 < i < lat.size})
    if not inside:
        return ()
    steps = np.diff(cumulative_distance(lat, lon))
    spacing = float(np.median(steps)) if steps.size else 0.0
    found = []
    for i in inside:
        length, rise = float(steps[i - 1]), float(elevation[i] - elevation[i - 1])
        far = length > max(GAP_LENGTH, 5 * spacing)
        jump = abs(rise) > GAP_RISE and abs(rise) > GAP_GRADE * max(length, 1.0)
        if far or jump:
            found.append(Gap(i, length, rise))
    return tuple(found)


@dataclass(frozen=True)
class Track:
    """The points of a route, as read from a GPX file.

    Attributes
    ----------
    path : str  file it came from
    name : str  from the file's metadata, track or route name, else the file name
    lat, lon : array [deg]  WGS84
    elevation : array [m]  every value finite (gaps were interpolated, see warnings)
    time : array [s]  POSIX time, NaN where missing
    waypoints : tuple of Waypoint  ``<wpt>`` elements
    route_points : tuple of Waypoint  named ``<rtept>`` elements
    source : str  "track" or "route": which elements the geometry came from
    warnings : tuple of str  what was repaired or looks odd
    gaps : tuple of Gap  jumps between track segments that are not ridden
    """

    path: str
    name: str
    lat: np.ndarray
    lon: np.ndarray
    elevation: np.ndarray
    time: np.ndarray
    waypoints: tuple[Waypoint, ...]
    route_points: tuple[Waypoint, ...]
    source: str
    warnings: tuple[str, ...]
    gaps: tuple[Gap, ...] = ()

    @property
    def points(self) -> int:
        """Number of points in the geometry."""
        return int(self.lat.size)


class _Points:
    """String columns of one kind of point, converted to arrays at the end."""

    def __init__(self) -> None:
        self.lat: list[str | None] = []
        self.lon: list[str | None] = []
        self.ele: list[str | None] = []
        self.time: list[str | None] = []


class _Prolog(Exception):
    """Raised inside the prolog check once the root element has been seen."""


def _check_prolog(path: Path, where: str) -> str:
    """Refuse a document type declaration, and a root element that is not <gpx>.

    Reads the file only up to its first element, with expat. Returns the root's
    namespace in ElementTree's form ("{uri}" or "").
    """
    parser = expat.ParserCreate(namespace_separator="}")
    found = {}

    def doctype(*_args: Any) -> Any:
        raise GpxError(
            f"{where}, line {parser.CurrentLineNumber}: the file declares a document type "
            "(<!DOCTYPE …>), where entities and external references live; GPX never needs "
            "one and cardgen refuses it for safety: remove the <!DOCTYPE …> part"
        )

    def start(name: str, _attrs: Any) -> Any:
        found["root"] = name
        raise _Prolog

    def declaration(_version: Any, encoding: str | None, _standalone: Any) -> None:
        if encoding is not None and encoding.strip().lower() not in ENCODINGS:
            raise GpxError(
                f"{where}: the file declares the encoding {encoding[:40]!r}; cardgen reads GPX in "
                "UTF-8, UTF-16, ASCII or ISO-8859-1: save it as UTF-8"
            )

    parser.XmlDeclHandler = declaration
    parser.StartDoctypeDeclHandler = doctype
    parser.EntityDeclHandler = doctype
    parser.StartElementHandler = start
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(1 << 16):
                parser.Parse(chunk, False)
            parser.Parse(b"", True)
    except _Prolog:
        root = found["root"]
        if root.rpartition("}")[2] != "gpx":
            raise GpxError(
                f"{where}: not a GPX file (the first element is <{root.rpartition('}')[2]}>, not <gpx>)"
            ) from None
        uri = root.rpartition("}")[0]
        return "{" + uri + "}" if uri else ""
    except expat.ExpatError as exc:
        raise GpxError(
            f"{where}, line {exc.lineno}, column {exc.offset}: {expat.ErrorString(exc.code)}: the XML is not "
            "well-formed (is the file truncated, or not GPX?)"
        ) from None
    raise GpxError(f"{where}: no XML element in the file; is it a GPX file?")


def _check_tokens(path: Path, where: str) -> None:
    """Refuse a file with a run of more than :data:`MAX_TOKEN_BYTES` bytes without a
    "<" or ">" (one huge attribute, name or text), before the XML parser meets it."""
    gap = 0  # bytes since the last delimiter, carried across chunks
    with open(path, "rb") as handle:
        while chunk := handle.read(1 << 22):
            marks = np.flatnonzero((np.frombuffer(chunk, dtype=np.uint8) | 2) == ord(">"))  # '<' or '>'
            if marks.size == 0:
                gap += len(chunk)
            else:
                inner = np.diff(marks).max(initial=0)
                gap = max(gap + int(marks[0]), int(inner))
                if gap > MAX_TOKEN_BYTES:
                    break
                gap = len(chunk) - 1 - int(marks[-1])
            if gap > MAX_TOKEN_BYTES:
                break
    if gap > MAX_TOKEN_BYTES:
        raise GpxError(
            f"{where}: one tag or text runs over {MAX_TOKEN_BYTES >> 20} MiB without a break; no GPX "
            "field is that long: the file is damaged or not a route"
        )


def _children_text(elem: Any) -> Any:
    """ele and time text of a point element (None where absent)."""
    ele = when = None
    for child in elem:
        name = _LOCAL.get(child.tag)
        if name == "ele":
            ele = child.text
        elif name == "time":
            when = child.text
    return ele, when


def _text(elem: Any, name: str) -> str:
    for child in elem:
        if _LOCAL.get(child.tag) == name:
            if name in ("link", "url"):
                return (child.get("href") or child.text or "").strip()
            return (child.text or "").strip()
    return ""


def _waypoint(elem: Any, where: str) -> Waypoint:
    lat, lon = _coordinate(elem.get("lat"), "lat", where), _coordinate(elem.get("lon"), "lon", where)
    ele, _ = _children_text(elem)
    elevation = _number_or_nan(ele)
    link = _text(elem, "link") or _text(elem, "url")
    return Waypoint(
        lat,
        lon,
        elevation,
        _text(elem, "name"),
        _text(elem, "desc") or _text(elem, "cmt"),
        _text(elem, "type"),
        link,
    )


def _number_or_nan(text: Any) -> float:
    try:
        return float(text)
    except (TypeError, ValueError):
        return float("nan")


def _coordinate(text: Any, axis: str, where: str) -> float:
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise GpxError(f"{where}: {axis} is {text!r}, not a number; fix or delete that point") from None
    if not math.isfinite(value):
        raise GpxError(f"{where}: {axis} is {text!r}, not a finite number; fix or delete that point")
    limit = 90.0 if axis == "lat" else 180.0
    if not -limit <= value <= limit:
        raise GpxError(f"{where}: {axis} {value} is outside ±{limit:g}°; fix or delete that point")
    return value


# one streaming pass over the XML: its branches are the GPX elements, kept together for speed
def read_gpx(path: str | os.PathLike[str]) -> Track:  # noqa: C901
    """Read a GPX file into a :class:`Track`.

    Raises
    ------
    GpxError
        For anything that is not a usable route, with the file name and, where the
        XML parser knows it, the line.
    """
    path = Path(path)
    where = str(path)
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise GpxError(f"{where}: no such file; check the path") from None
    except OSError as exc:
        raise GpxError(f"{where}: cannot read the file ({exc.strerror})") from None
    if not path.is_file():
        raise GpxError(f"{where}: not a regular file")
    if size == 0:
        raise GpxError(f"{where}: the file is empty; export the route again")
    if size > MAX_FILE_BYTES:
        raise GpxError(
            f"{where}: {size / 2**20:.0f} MiB is larger than the {MAX_FILE_BYTES / 2**20:.0f} MiB "
            "cardgen reads; split the route or thin its points"
        )

    ns = _check_prolog(path, where)
    if size > MAX_TOKEN_BYTES:
        _check_tokens(path, where)
    track, route = _Points(), _Points()
    waypoints: list[Waypoint] = []
    route_points: list[Waypoint] = []
    names = {"metadata": "", "trk": "", "rte": ""}
    tracks = 0
    segment_starts: list[int] = []
    local = _LOCAL.get
    trkpt_tag, ele_tag, time_tag = ns + "trkpt", ns + "ele", ns + "time"
    t_lat, t_lon, t_ele, t_time = track.lat.append, track.lon.append, track.ele.append, track.time.append
    try:
        with open(path, "rb") as handle:
            for _, elem in iterparse(handle):
                tag = elem.tag
                # The hot path: one trackpoint, its <ele> and <time>, by exact tag.
                if tag == ele_tag or tag == time_tag:
                    continue
                if tag == trkpt_tag:
                    attrib = elem.attrib
                    t_lat(attrib.get("lat"))
                    t_lon(attrib.get("lon"))
                    ele = when = None
                    for child in elem:
                        child_tag = child.tag
                        if child_tag == ele_tag:
                            ele = child.text
                        elif child_tag == time_tag:
                            when = child.text
                    t_ele(ele)
                    t_time(when)
                    elem.clear()
                    continue
                name = local(tag)
                if name is None or name in ("ele", "time", "name", "desc", "type", "link", "url", "cmt"):
                    continue
                elif name == "trkpt":  # a trackpoint in another GPX namespace than its root
                    ele, when = _children_text(elem)
                    t_lat(elem.get("lat"))
                    t_lon(elem.get("lon"))
                    t_ele(ele)
                    t_time(when)
                    elem.clear()
                elif name == "trkseg":
                    segment_starts.append(len(track.lat))  # where the next segment would begin
                    elem.clear()
                    if len(track.lat) > MAX_POINTS:
                        break
                elif name == "rtept":
                    ele, when = _children_text(elem)
                    route.lat.append(elem.get("lat"))
                    route.lon.append(elem.get("lon"))
                    route.ele.append(ele)
                    route.time.append(when)
                    if _text(elem, "name"):
                        route_points.append(_waypoint(elem, f"{where}: route point {len(route.lat)}"))
                    elem.clear()
                elif name == "wpt":
                    waypoints.append(_waypoint(elem, f"{where}: waypoint {len(waypoints) + 1}"))
                    elem.clear()
                elif name in ("trk", "rte", "metadata"):
                    tracks += name == "trk"
                    names[name] = names[name] or _text(elem, "name")
                    elem.clear()
                if len(route.lat) + len(waypoints) > MAX_POINTS or len(waypoints) > MAX_NAMED_POINTS:
                    break
    except ParseError as exc:
        line, column = getattr(exc, "position", (0, 0))
        raise GpxError(
            f"{where}, line {line}, column {column}: {_reason(exc)}: the XML is not well-formed "
            "(is the file truncated, or not GPX?)"
        ) from None
    except OSError as exc:
        raise GpxError(f"{where}: cannot read the file ({exc.strerror})") from None
    if max(len(track.lat), len(route.lat) + len(waypoints)) > MAX_POINTS:
        raise GpxError(f"{where}: more than {MAX_POINTS:,} points; split the route or thin its points")
    if len(waypoints) + len(route_points) > MAX_NAMED_POINTS:
        raise GpxError(
            f"{where}: more than {MAX_NAMED_POINTS:,} waypoints and named route points; a card's cue sheet "
            "cannot hold them: keep the ones riders need"
        )

    use, source = (track, "track") if track.lat else (route, "route")
    label = "trackpoint" if source == "track" else "route point"
    if len(use.lat) < 2:
        found = "no track or route points" if not use.lat else f"only one {label}"
        raise GpxError(f"{where}: {found}; a route needs at least two points in <trk> or <rte>")
    lat = _column(use.lat, "lat", label, where)
    lon = _column(use.lon, "lon", label, where)
    warnings = []
    if tracks > 1:
        warnings.append(f"{tracks} tracks were joined in file order")
    elevation, repaired = _elevation(use.ele, lat, lon, label, where)
    if repaired:
        warnings.append(
            f"{repaired} of {lat.size} {label}s had no usable elevation; " "interpolated along the distance"
        )
    gaps = _gaps(lat, lon, elevation, segment_starts if source == "track" else [])
    if gaps:
        listed = ", ".join(
            f"{g.length / 1000:.1f} km" if g.length >= 1000 else f"{g.length:.0f} m" for g in gaps[:5]
        )
        warnings.append(
            f"{len(gaps)} gap(s) between track segments ({listed}{', …' if len(gaps) > 5 else ''}) were joined: "
            "their straight line and elevation jump are not counted as ridden; check that the route is what you "
            "meant to plan"
        )
    times = _times(use.time)
    if np.sum(np.diff(times[np.isfinite(times)]) < 0) > 0:
        warnings.append("timestamps go backwards in places; times in the file are ignored")
    name = names["metadata"] or names["trk"] or names["rte"] or path.stem
    return Track(
        where,
        name,
        lat,
        lon,
        elevation,
        times,
        tuple(waypoints),
        tuple(route_points),
        source,
        tuple(warnings),
        gaps,
    )


def _reason(exc: ParseError) -> str:
    text = str(exc)
    return text.split(":")[0] if ":" in text else text


def _column(values: list[str | None], axis: str, label: str, where: str) -> np.ndarray:
    try:
        array = np.array(values, dtype=float)
    except (TypeError, ValueError):
        array = None
    limit = 90.0 if axis == "lat" else 180.0
    if array is not None:
        for zero in np.flatnonzero(array == 0.0).tolist():  # "1e-400" reads as 0: refuse what underflowed
            text = str(values[zero]).lower()
            if "e" in text and any(c in "123456789" for c in text.split("e")[0]):
                raise GpxError(
                    f"{where}: {label} {zero + 1}: {axis} {values[zero]!r} is too small to be a "
                    "coordinate (it reads as 0); fix or delete that point"
                )
    if array is None or not (np.abs(array) <= limit).all():  # also catches NaN and inf
        for i, raw in enumerate(values):
            _coordinate(raw, axis, f"{where}: {label} {i + 1}")
    assert array is not None  # _coordinate raised otherwise
    return array


def _elevation(values: list[str | None], lat: Floats, lon: Floats, label: str, where: str) -> Any:
    text = ["nan" if v is None or not v.strip() else v for v in values]
    try:
        ele = np.array(text, dtype=float)
    except ValueError:
        ele = np.array([_number_or_nan(v) for v in text])
    usable = np.isfinite(ele) & (ele >= ELEVATION_RANGE[0]) & (ele <= ELEVATION_RANGE[1])
    if not usable.any():
        raise GpxError(
            f"{where}: no {label} has an elevation (<ele>); cardgen needs elevations for climbs. "
            "Add them with a tool that looks elevations up in a terrain model, then try again"
        )
    missing = int((~usable).sum())
    if missing:
        distance = cumulative_distance(lat, lon)
        ele = np.interp(distance, distance[usable], ele[usable])
    return ele, missing


def _times(values: list[str | None]) -> np.ndarray:
    """POSIX seconds; NaN where missing or unreadable."""
    if all(v is None for v in values):
        return np.full(len(values), np.nan)
    stripped = ["NaT" if v is None else v.strip().rstrip("Zz") for v in values]
    try:
        with warnings.catch_warnings():
            # numpy warns on (and we refuse) UTC offsets such as +02:00: the slow path
            # below reads them properly.
            warnings.simplefilter("error")
            stamps = np.array(stripped, dtype="datetime64[ms]")
        seconds = stamps.astype("int64") / 1000.0
        return np.where(np.isnat(stamps), np.nan, seconds)
    except (ValueError, Warning):
        out = np.full(len(values), np.nan)
        for i, v in enumerate(values):
            if v is None:
                continue
            try:
                when = datetime.fromisoformat(v.strip())
                if when.tzinfo is None:
                    when = when.replace(tzinfo=UTC)
                out[i] = when.timestamp()
            except (ValueError, OverflowError):
                pass
        return out
