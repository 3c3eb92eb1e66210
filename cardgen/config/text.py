"""Text from ``site.toml`` and the entrants file that is printed on pages, cards and
in CSV files: control characters (NUL, escape sequences, …) are refused there, by
position, so that the message itself prints none of them."""

from __future__ import annotations

import unicodedata
import urllib.parse

#: Keys whose text may run over several lines (a newline and a tab are allowed there).
MULTILINE = frozenset({"notes", "contact", "emergency"})


def control_problem(text: str, key: str) -> str | None:
    """None when ``text`` holds no control character (besides a newline or a tab in a
    key of :data:`MULTILINE`), else what is wrong, naming the character by its code."""
    allowed = "\n\t" if key in MULTILINE else ""
    for position, char in enumerate(text, 1):
        if unicodedata.category(char) == "Cc" and char not in allowed:
            return (
                f"holds a control character (U+{ord(char):04X}) at character {position}; "
                "remove it (names and titles are printed as they are written)"
            )
    return None


def has_host(url: str) -> bool:
    """Whether an http(s) address names a host (``http://`` alone does not)."""
    try:
        return bool(urllib.parse.urlsplit(url).hostname)
    except ValueError:  # e.g. a bracketed host that is no address
        return False
