"""Numbers written as text (spreadsheet cells, the distances of ``cue_texts``): one
format, read the same way everywhere, and everything else refused.

The format: digits, with an optional minus sign and an optional decimal point
followed by digits (``250``, ``12.5``, ``-3``). No thousands separators (``1,000``
could be one thousand or one), no decimal comma, no underscores (``2_00``), no
exponent (``1e308``), no ``nan`` or ``inf``, no digits of other scripts.
"""

from __future__ import annotations

import re

#: A number as cardgen reads it from text.
NUMBER = re.compile(r"-?[0-9]+(\.[0-9]+)?", re.ASCII)
#: A whole number as cardgen reads it from text.
WHOLE = re.compile(r"-?[0-9]+", re.ASCII)
#: What the format is, for messages.
FORMAT = "digits with a decimal point if needed, like 1000 or 12.5 (no thousands separators or exponents)"


def parse_number(text: str) -> float | None:
    """The number ``text`` holds in the one format, or None when it holds something else."""
    text = text.strip()
    return float(text) if NUMBER.fullmatch(text) else None


def parse_whole(text: str) -> int | None:
    """The whole number ``text`` holds (at most 18 digits), or None."""
    text = text.strip()
    return int(text) if WHOLE.fullmatch(text) and len(text.lstrip("-")) <= 18 else None
