"""Checking the tables of numbers of profile files, in one place."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from cardgen.errors import close_matches
from cardgen.profiles.limits import LIMITS


def check_numbers(
    table: Mapping[str, Any], keys: Mapping[str, str], *, required: bool = True
) -> tuple[dict[str, float], list[str]]:
    """Check the numbers of a table against :data:`LIMITS`.

    ``keys`` maps each key of the file to the attribute it fills. Returns (values in
    SI by attribute, problems as "'key' …" phrases); a missing key is a problem when
    ``required``.
    """
    values: dict[str, float] = {}
    problems: list[str] = []
    for key, attr in keys.items():
        raw = table.get(key)
        if raw is None:
            if required:
                problems.append(f"missing key '{key}'")
            continue
        limit = LIMITS[key]
        problem = limit.problem(raw)
        if problem:
            problems.append(f"'{key}' {problem}")
        else:
            values[attr] = float(raw) * limit.to_si
    return values, problems


def unknown_keys(table: Mapping[str, Any], known: Iterable[str]) -> list[str]:
    """A problem phrase for every key of ``table`` not in ``known``, with close matches."""
    known = list(known)
    return [
        f"unknown key '{key}'{close_matches(key, known)} (allowed: {', '.join(sorted(known))})"
        for key in table
        if key not in known
    ]
