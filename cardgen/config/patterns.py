"""Paths and patterns written in ``site.toml``: resolved against the file's folder,
with one clear message for what the file system cannot take (a NUL character, a
link that leads to itself), and patterns such as ``routes/*.gpx`` or ``**/*.gpx``
that never match a site cardgen built (its own ``route.gpx`` files)."""

from __future__ import annotations

import json
import re
from pathlib import Path

from cardgen.errors import ConfigError

#: Characters that make a path a pattern.
GLOB_CHARS = "*?["
#: The hidden folders a build keeps beside its output (cardgen.build.publish).
_BUILD_FOLDER = re.compile(r"^\..+\.cardgen-(tmp|old)-\d+$")
#: Largest manifest read to tell whether a folder is a built site [bytes].
_MANIFEST_BYTES = 16 << 20


def is_pattern(text: str) -> bool:
    """Whether ``text`` is a pattern (holds ``*``, ``?`` or ``[``)."""
    return any(c in text for c in GLOB_CHARS)


def local_path(folder: Path, raw: str, where: str) -> Path:
    """``raw`` resolved against ``folder`` (an absolute path stays as it is).

    Raises
    ------
    ConfigError
        When ``raw`` holds a NUL character (no file system takes one) or is a
        symbolic link that leads back to itself.
    """
    if "\x00" in raw:
        raise ConfigError(
            f"{where}: the path holds a NUL character (\\u0000), which no file name can; remove it"
        )
    try:
        return (folder / raw).resolve()
    except RuntimeError:  # Python 3.11: "Symlink loop from …"
        raise ConfigError(
            f"{where}: {raw} is a symbolic link that leads back to itself; point it at the file"
        ) from None
    except (OSError, ValueError) as exc:
        raise ConfigError(f"{where}: {raw} cannot be used as a path ({exc}); check it") from None


def _is_built_site(folder: Path) -> bool:
    """Whether ``folder`` is a site cardgen built (its manifest names cardgen), or one
    of the hidden folders a build keeps beside its output."""
    if _BUILD_FOLDER.match(folder.name):
        return True
    manifest = folder / "manifest.json"
    try:
        if not manifest.is_file() or manifest.stat().st_size > _MANIFEST_BYTES:
            return False
        data = json.loads(manifest.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return isinstance(data, dict) and data.get("generator") == "cardgen"


def _split(pattern: str) -> tuple[Path, str]:
    """The folder before the first part with a glob character, and the rest."""
    parts = Path(pattern).parts
    literal = 0
    while literal < len(parts) - 1 and not is_pattern(parts[literal]):
        literal += 1
    return Path(*parts[:literal]) if literal else Path(), "/".join(parts[literal:])


def expand(folder: Path, pattern: str, where: str, suffix: str = ".gpx") -> list[Path]:
    """The files (ending in ``suffix``, any case) that ``pattern`` matches, relative to
    ``folder`` or absolute, sorted and resolved; none inside a site cardgen built (so a
    site built inside the event folder never feeds its own ``route.gpx`` back in).

    Raises
    ------
    ConfigError
        For a NUL character in the pattern.
    """
    base, rest = _split(pattern)
    root = local_path(folder, str(base), where)
    if not root.is_dir():
        return []
    sites: dict[Path, bool] = {}

    def in_a_site(path: Path) -> bool:
        for parent in path.parents:
            if parent == root or root not in parent.parents:
                return False
            if parent not in sites:
                sites[parent] = _is_built_site(parent)
            if sites[parent]:
                return True
        return False

    found = [p for p in root.glob(rest) if p.suffix.lower() == suffix and p.is_file() and not in_a_site(p)]
    return sorted({p.resolve() for p in found})
