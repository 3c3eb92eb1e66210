"""What every command shares: printing that cannot steer the terminal, numbers for the
terminal, and checks of options against the one table of limits."""

from __future__ import annotations

import argparse
import math
import re
from collections.abc import Callable
from typing import Any

from cardgen.errors import CardgenError

#: Characters that would steer a terminal (escape sequences, bidirectional overrides)
#: when names from GPX files or configs are printed: shown as U+FFFD instead.
_STEERING = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def _print(*parts: object, **kwargs: Any) -> None:
    """print(), with text that cannot steer the terminal."""
    print(*(_STEERING.sub("\ufffd", str(part)) for part in parts), **kwargs)


def _n(value: float | None, spec: str, sign: float = 1.0) -> str:
    """A number of the JSON for the terminal: a dash for null, never "-0"."""
    if value is None:
        width = re.match(r"[<>]?(\d*)", spec)
        return "–".rjust(int(width.group(1) or 0) if width else 0)
    return format(sign * value + 0.0, spec)


def _within(option: str, value: float | None, key: str) -> None:
    """Refuse ``value`` of ``option`` outside its range in the one table of limits
    (:data:`cardgen.profiles.limits.LIMITS`); None (not given) passes."""
    from cardgen.profiles.limits import LIMITS

    if value is None:
        return
    problem = LIMITS[key].problem(value)
    if problem:
        raise CardgenError(f"{option} {problem.removeprefix('= ')}")


def _ensure(condition: bool, message: str) -> None:
    if not condition:
        raise CardgenError(message)


def _finite(value: float | None, name: str) -> None:
    _ensure(value is None or math.isfinite(value), f"{name} must be a finite number")


def _ranged(low: int, high: int, what: str) -> Callable[[str], int]:
    """An argparse type: a whole number from ``low`` to ``high`` (else a usage error, exit 2)."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{value} is outside {low}…{high} ({what})")
        return value

    return parse
