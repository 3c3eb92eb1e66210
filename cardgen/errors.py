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
    matches = difflib.get_close_matches(word, list(known), n=3, cutoff=0.6)
    if not matches:
        return ""
    return " (did you mean " + " or ".join(f"'{m}'" for m in matches) + "?)"
