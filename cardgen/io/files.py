"""Bounded reading of text and TOML files: the one place that opens them.

Every reader refuses what is not a regular file before it reads a byte (a FIFO or a
device could hang the build) and anything over its size limit, and raises the
caller's error class with the file's name.
"""

from __future__ import annotations

import os
import stat
import tomllib
from importlib import resources
from pathlib import Path
from typing import Any

from cardgen.errors import CardgenError

#: Largest TOML file read [bytes]: a site of 10,000 riders is about 1.5 MB.
MAX_TOML_BYTES = 16 * 1024 * 1024


def read_text_bounded(path: Path, what: str, error: type[CardgenError], limit: int = MAX_TOML_BYTES) -> str:
    """The UTF-8 text of a regular file no larger than ``limit`` bytes.

    FIFOs, devices and folders are refused before anything is read (reading them
    could hang or never end), and so is a file over the limit.
    """
    path = Path(path)
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise error(f"{path}: no such {what} file; check the path") from None
    except OSError as exc:
        raise error(f"{path}: cannot read the {what} file ({exc.strerror or exc})") from None
    if not stat.S_ISREG(st.st_mode):
        raise error(f"{path}: not a regular file; give the path of a {what} file") from None
    if st.st_size > limit:
        raise error(
            f"{path}: {st.st_size:,} bytes is more than a {what} file may hold " f"({limit:,} bytes)"
        ) from None
    try:
        with open(path, "rb") as handle:
            data = handle.read(limit + 1)
    except OSError as exc:
        raise error(f"{path}: cannot read the {what} file ({exc.strerror or exc})") from None
    if len(data) > limit:
        raise error(f"{path}: more than a {what} file may hold ({limit:,} bytes)") from None
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise error(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start}); save it as UTF-8") from None


def read_toml(path: Path, what: str, error: type[CardgenError]) -> tuple[dict[str, Any], str]:
    """A TOML file as (data, text); every failure is ``error`` naming the file."""
    text = read_text_bounded(path, what, error)
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as exc:
        raise error(f"{path}: not valid TOML: {exc}; fix the syntax there") from None
    except RecursionError:  # the parser recurses once per level: Python's stack is the bound
        raise error(
            f"{path}: not valid TOML: arrays or inline tables nested too deeply to read "
            "(hundreds of levels); fix the syntax there"
        ) from None


def read_package_toml(package: str, *parts: str) -> dict[str, Any]:
    """A TOML data file shipped inside ``package`` (trusted: the package's own data)."""
    return tomllib.loads(resources.files(package).joinpath(*parts).read_text(encoding="utf-8"))
