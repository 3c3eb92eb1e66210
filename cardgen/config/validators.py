"""One small validator per kind of value in ``site.toml``.

Each takes the raw TOML value, its :class:`~cardgen.config.schema.Spec` and its
:class:`Place`, and returns the checked value or raises :class:`Invalid` with a
message that says where the value is, what is wrong and how to fix it.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from datetime import date, datetime, time
from pathlib import Path
from typing import Any

from cardgen.config.numbers import FORMAT
from cardgen.config.patterns import local_path
from cardgen.config.schema import EVENT_YEARS, MAX_URL_LENGTH, Spec
from cardgen.config.text import control_problem, has_host
from cardgen.errors import CardgenError, ConfigError, close_file_names
from cardgen.profiles.limits import LIMITS
from cardgen.profiles.vehicles import Vehicle, find_vehicle


class Invalid(Exception):
    """A value that does not fit its key; the message is the whole problem."""


@dataclass(frozen=True)
class Place:
    """Where a value is: ``where`` for messages, ``folder`` for relative paths, the
    site's own ``vehicles``, and ``inputs``, the list of files the configuration reads."""

    where: str
    key: str
    folder: Path
    vehicles: Mapping[str, Vehicle]
    inputs: list[Path]


def _text(raw: Any, place: Place) -> str:
    if not isinstance(raw, str):
        raise Invalid(f"{place.where} must be text in quotes, not {raw!r}")
    return raw


def _as_written(raw: Any) -> str:
    """How to write a number, for a value that came as text (a spreadsheet cell)."""
    return f"; write {FORMAT}" if isinstance(raw, str) else ""


def number(raw: Any, spec: Spec, place: Place) -> Any:
    """A number in the range of its entry in the table of limits."""
    problem = LIMITS[spec.limit].problem(raw)
    if problem:
        raise Invalid(
            f"{place.where} {problem}" + (f" ({spec.about})" if spec.about else "") + _as_written(raw)
        )
    return raw


def whole_number(raw: Any, spec: Spec, place: Place) -> Any:
    """A whole number (not true or false) in its range."""
    if isinstance(raw, bool) or not isinstance(raw, int):
        raise Invalid(f"{place.where} must be a whole number, not {raw!r}{_as_written(raw)}")
    return number(raw, spec, place)


def boolean(raw: Any, spec: Spec, place: Place) -> bool:
    if not isinstance(raw, bool):
        raise Invalid(f"{place.where} must be true or false, not {raw!r}")
    return raw


def text(raw: Any, spec: Spec, place: Place) -> str:
    """Text without control characters."""
    value = _text(raw, place)
    control = control_problem(value, place.key)
    if control:
        raise Invalid(f"{place.where} {control}")
    return value


def choice(raw: Any, spec: Spec, place: Place) -> str:
    """One of the spec's choices (an enumeration)."""
    value = _text(raw, place)
    if value not in spec.choices:
        raise Invalid(f"{place.where} = {raw!r}; use one of {', '.join(spec.choices)}")
    return value


def path(raw: Any, spec: Spec, place: Place) -> Path:
    """An existing file, relative to the configuration's folder; resolved."""
    try:
        resolved = local_path(place.folder, _text(raw, place), place.where)
    except ConfigError as exc:
        raise Invalid(str(exc)) from None
    if not resolved.is_file():
        raise Invalid(
            f"{place.where}: no file {resolved}{_near_names(resolved)}; check the path "
            f"(relative to {place.folder})"
        )
    return resolved


#: Files of a folder looked at for a misspelt name's suggestion (a folder of a huge
#: number of files is not listed whole for a message).
NEAR_NAMES_LOOKED_AT = 1000


def _near_names(missing: Path) -> str:
    """ " (did you mean 'hill-loop.gpx'?)" for files beside a missing one with a close
    name, or ""."""
    try:
        names = [
            p.name for p in itertools.islice(missing.parent.iterdir(), NEAR_NAMES_LOOKED_AT) if p.is_file()
        ]
    except OSError:
        return ""
    return close_file_names(missing.name, names)


def vehicle(raw: Any, spec: Spec, place: Place) -> Vehicle:
    """A vehicle of the site, a built-in one, or a profile file (recorded as an input)."""
    name = _text(raw, place)
    if name in place.vehicles:
        return place.vehicles[name]
    if "\x00" in name:
        raise Invalid(f"{place.where}: the name holds a NUL character (\\u0000); remove it")
    is_file = name.lower().endswith(".toml")
    if is_file:
        place.inputs.append(place.folder / name)
    try:
        return find_vehicle(str(place.folder / name) if is_file else name)
    except CardgenError as exc:
        raise Invalid(f"{place.where}: {exc}") from None


def values(raw: Any, spec: Spec, place: Place) -> tuple[Any, ...]:
    """A list of names and numbers."""
    if not isinstance(raw, list) or not all(
        isinstance(x, str | int | float) and not isinstance(x, bool) for x in raw
    ):
        raise Invalid(f'{place.where} must be a list like ["name", 12.5]')
    return tuple(raw)


def day(raw: Any, spec: Spec, place: Place) -> date:
    """A date (TOML's own, or ISO text) within :data:`EVENT_YEARS`."""
    try:
        found = (
            raw if isinstance(raw, date) and not isinstance(raw, datetime) else date.fromisoformat(str(raw))
        )
    except ValueError:
        raise Invalid(f'{place.where} = {raw!r} is not a date like "2027-04-18"') from None
    if not EVENT_YEARS[0] <= found.year <= EVENT_YEARS[1]:
        raise Invalid(
            f"{place.where} = {found.isoformat()} is outside the years "
            f"{EVENT_YEARS[0]}…{EVENT_YEARS[1]}; check the year"
        )
    return found


def time_of_day(raw: Any, spec: Spec, place: Place) -> time:
    """A time of day (TOML's own, or text like "08:30")."""
    if isinstance(raw, time):
        return raw
    try:
        return time.fromisoformat(str(raw))
    except ValueError:
        raise Invalid(f'{place.where} = {raw!r} is not a time like "08:30"') from None


def url(raw: Any, spec: Spec, place: Place) -> str:
    """Empty, or an http(s) address short enough for a readable QR code."""
    value = _text(raw, place)
    if value and (
        not value.lower().startswith(("http://", "https://"))
        or not has_host(value)
        or len(value) > MAX_URL_LENGTH
        or any(c.isspace() or ord(c) < 32 for c in value)
    ):
        raise Invalid(
            f"{place.where} must be an http:// or https:// address with a host name, of at most "
            f'{MAX_URL_LENGTH} characters without spaces, like "https://example.org/rides"'
        )
    return value


#: The validator of each kind of key in :data:`cardgen.config.schema.SCHEMA`.
VALIDATORS: dict[str, Callable[[Any, Spec, Place], Any]] = {
    "number": number,
    "int": whole_number,
    "bool": boolean,
    "str": text,
    "choice": choice,
    "path": path,
    "vehicle": vehicle,
    "list": values,
    "date": day,
    "time": time_of_day,
    "url": url,
}
