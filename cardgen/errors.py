"""One exception family for everything the user can get wrong.

Every message says what is wrong, where (file, line or key) and how to fix it.
Only :mod:`cardgen.cli` turns these into exit codes; nothing else prints.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable


class CardgenError(Exception):
    """Base of every error that is the input's fault, not the program's."""


class GpxError(CardgenError):
    """A GPX file cannot be read or makes no sense as a route."""


class VehicleError(CardgenError):
    """A vehicle profile is unknown, missing a key or physically impossible."""


class ConfigError(CardgenError):
    """A site configuration file is wrong."""


def close_matches(word: str, known: Iterable[str]) -> str:
    """ " (did you mean 'x' or 'y'?)" for the closest known words, or "": the fix a
    message offers for a misspelt name."""
    return did_you_mean(difflib.get_close_matches(word, list(known), n=3, cutoff=0.6))


def did_you_mean(matches: Iterable[str]) -> str:
    """ " (did you mean 'x' or 'y'?)", or "" for no matches."""
    matches = list(matches)
    if not matches:
        return ""
    return " (did you mean " + " or ".join(f"'{m}'" for m in matches) + "?)"


#: How alike a missing file's name must be to a file's beside it to be offered
#: (difflib's ratio of the names without their common suffix, case ignored): "hill-lop"
#: and "hill-loop" are 0.94 alike, "hill-lop" and "riverside-loop" 0.45, which the
#: suffix ".gpx" they share raised to 0.6, the general cutoff. Common practice, no
#: published source.
FILE_CUTOFF = 0.75


def close_file_names(missing: str, names: Iterable[str]) -> str:
    """ " (did you mean 'hill-loop.gpx'?)" for the files among ``names`` of the missing
    one's suffix whose stems are close to its stem, or ""."""
    stem, dot, suffix = missing.rpartition(".")
    if not dot:
        stem, suffix = missing, ""
    by_stem: dict[str, str] = {}
    for name in names:
        other, other_dot, other_suffix = name.rpartition(".")
        if not other_dot:
            other, other_suffix = name, ""
        if other_suffix.lower() == suffix.lower():
            by_stem.setdefault(other.lower(), name)
    close = difflib.get_close_matches(stem.lower(), list(by_stem), n=3, cutoff=FILE_CUTOFF)
    return did_you_mean(by_stem[c] for c in close)
