"""GPX 1.0 / 1.1 → numpy arrays, in one streaming pass over untrusted XML.

The only module that parses GPX (:mod:`cardgen.io.gpx` reads the file). GPX is untrusted: a first expat pass reads only the
prolog and refuses any document type declaration (the only place where entities,
and so entity expansion and external references, can be declared) and any root
element other than <gpx>; then ElementTree's C parser streams the points. The point
count is bounded (the file's size by the reader). Trackpoints are collected as strings in one pass and
converted to arrays at once; no object is built per point.
"""

from __future__ import annotations

import io
import math
import warnings
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import PurePath
from typing import Any
from xml.etree.ElementTree import ParseError, iterparse
from xml.parsers import expat

import numpy as np

from cardgen.errors import GpxError
from cardgen.route.geodesy import cumulative_distance
from cardgen.units import Floats

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

    def add(self, lat: str | None, lon: str | None, ele: str | None, when: str | None) -> None:
        self.lat.append(lat)
        self.lon.append(lon)
        self.ele.append(ele)
        self.time.append(when)


class _Prolog(Exception):
    """Raised inside the prolog check once the root element has been seen."""


def _check_prolog(data: bytes, where: str) -> str:
    """Refuse a document type declaration, and a root element that is not <gpx>.

    Reads the document only up to its first element, with expat. Returns the root's
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
        view = memoryview(data)
        for start_at in range(0, len(data), 1 << 16):
            parser.Parse(bytes(view[start_at : start_at + (1 << 16)]), False)
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


def _check_tokens(data: bytes, where: str) -> None:
    """Refuse a file with a run of more than :data:`MAX_TOKEN_BYTES` bytes without a
    "<" or ">" (one huge attribute, name or text), before the XML parser meets it."""
    gap = 0  # bytes since the last delimiter, carried across chunks
    view = memoryview(data)
    for start_at in range(0, len(data), 1 << 22):
        chunk = view[start_at : start_at + (1 << 22)]
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


def parse_gpx(data: bytes, path: str = "GPX data") -> Track:
    """Parse the bytes of a GPX file into a :class:`Track` (no file access: see
    :func:`cardgen.io.gpx.read_gpx` for reading a file).

    Parameters
    ----------
    data : bytes
        The whole document.
    path : str
        Where it came from: named in every message, and its stem is the route's
        name when the file names none.

    Raises
    ------
    GpxError
        For anything that is not a usable route, with ``path`` and, where the XML
        parser knows it, the line.
    """
    where = path
    ns = _check_prolog(data, where)
    if len(data) > MAX_TOKEN_BYTES:
        _check_tokens(data, where)
    found = _Elements(ns, where)
    try:
        found.read(data)
    except ParseError as exc:
        line, column = getattr(exc, "position", (0, 0))
        raise GpxError(
            f"{where}, line {line}, column {column}: {_reason(exc)}: the XML is not well-formed "
            "(is the file truncated, or not GPX?)"
        ) from None
    found.check_counts()
    return found.track(PurePath(path).stem)


class _Elements:
    """What one streaming pass over the XML collects: track and route points as
    strings, waypoints, named route points, names, segment starts."""

    def __init__(self, ns: str, where: str) -> None:
        self.ns, self.where = ns, where
        self.trk, self.rte = _Points(), _Points()
        self.waypoints: list[Waypoint] = []
        self.route_points: list[Waypoint] = []
        self.names = {"metadata": "", "trk": "", "rte": ""}
        self.tracks = 0
        self.segment_starts: list[int] = []

    def read(self, data: bytes) -> None:
        """One pass; the hot path (a trackpoint, its <ele> and <time>) by exact tag."""
        local = _LOCAL.get
        trkpt_tag, ele_tag, time_tag = self.ns + "trkpt", self.ns + "ele", self.ns + "time"
        track = self.trk
        t_lat, t_lon, t_ele, t_time = track.lat.append, track.lon.append, track.ele.append, track.time.append
        for _, elem in iterparse(io.BytesIO(data)):
            tag = elem.tag
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
            if name is None or name in _INSIDE_POINTS:
                continue
            if self.element(name, elem):
                break

    def element(self, name: str, elem: Any) -> bool:
        """Take one element other than a trackpoint of the root's namespace; True
        when a limit is reached and reading should stop."""
        if name == "trkpt":  # a trackpoint in another GPX namespace than its root
            ele, when = _children_text(elem)
            self.trk.add(elem.get("lat"), elem.get("lon"), ele, when)
        elif name == "trkseg":
            self.segment_starts.append(len(self.trk.lat))  # where the next segment would begin
            if len(self.trk.lat) > MAX_POINTS:
                elem.clear()
                return True
        elif name == "rtept":
            ele, when = _children_text(elem)
            self.rte.add(elem.get("lat"), elem.get("lon"), ele, when)
            if _text(elem, "name"):
                self.route_points.append(_waypoint(elem, f"{self.where}: route point {len(self.rte.lat)}"))
        elif name == "wpt":
            self.waypoints.append(_waypoint(elem, f"{self.where}: waypoint {len(self.waypoints) + 1}"))
        elif name in ("trk", "rte", "metadata"):
            self.tracks += name == "trk"
            self.names[name] = self.names[name] or _text(elem, "name")
        elem.clear()
        return len(self.rte.lat) + len(self.waypoints) > MAX_POINTS or len(self.waypoints) > MAX_NAMED_POINTS

    def check_counts(self) -> None:
        where = self.where
        if max(len(self.trk.lat), len(self.rte.lat) + len(self.waypoints)) > MAX_POINTS:
            raise GpxError(f"{where}: more than {MAX_POINTS:,} points; split the route or thin its points")
        if len(self.waypoints) + len(self.route_points) > MAX_NAMED_POINTS:
            raise GpxError(
                f"{where}: more than {MAX_NAMED_POINTS:,} waypoints and named route points; a card's cue sheet "
                "cannot hold them: keep the ones riders need"
            )

    def track(self, stem: str) -> Track:
        """The collected points as a :class:`Track` (the track's, else the route's)."""
        where = self.where
        use, source = (self.trk, "track") if self.trk.lat else (self.rte, "route")
        label = "trackpoint" if source == "track" else "route point"
        if len(use.lat) < 2:
            found = "no track or route points" if not use.lat else f"only one {label}"
            raise GpxError(f"{where}: {found}; a route needs at least two points in <trk> or <rte>")
        lat = _column(use.lat, "lat", label, where)
        lon = _column(use.lon, "lon", label, where)
        warnings = []
        if self.tracks > 1:
            warnings.append(f"{self.tracks} tracks were joined in file order")
        elevation, repaired = _elevation(use.ele, lat, lon, label, where)
        if repaired:
            warnings.append(
                f"{repaired} of {lat.size} {label}s had no usable elevation; "
                "interpolated along the distance"
            )
        gaps = _gaps(lat, lon, elevation, self.segment_starts if source == "track" else [])
        if gaps:
            warnings.append(_gap_warning(gaps))
        times = _times(use.time)
        if np.sum(np.diff(times[np.isfinite(times)]) < 0) > 0:
            warnings.append("timestamps go backwards in places; times in the file are ignored")
        name = self.names["metadata"] or self.names["trk"] or self.names["rte"] or stem
        return Track(
            where,
            name,
            lat,
            lon,
            elevation,
            times,
            tuple(self.waypoints),
            tuple(self.route_points),
            source,
            tuple(warnings),
            gaps,
        )


#: Child elements of points and of named elements: read with their parent.
_INSIDE_POINTS = frozenset(("ele", "time", "name", "desc", "type", "link", "url", "cmt"))


def _gap_warning(gaps: tuple[Gap, ...]) -> str:
    listed = ", ".join(
        f"{g.length / 1000:.1f} km" if g.length >= 1000 else f"{g.length:.0f} m" for g in gaps[:5]
    )
    return (
        f"{len(gaps)} gap(s) between track segments ({listed}{', …' if len(gaps) > 5 else ''}) were joined: "
        "their straight line and elevation jump are not counted as ridden; check that the route is what you "
        "meant to plan"
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


def _elevation(
    values: list[str | None], lat: Floats, lon: Floats, label: str, where: str
) -> tuple[np.ndarray, int]:
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
