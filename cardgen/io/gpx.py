"""Reading a GPX file: the file's checks, then :func:`cardgen.route.gpx.parse_gpx`."""

from __future__ import annotations

import os
from pathlib import Path

from cardgen.errors import GpxError
from cardgen.route.gpx import Track, parse_gpx

#: Largest GPX file read [bytes]: 100 MiB holds about 800,000 plain trackpoints,
#: over 8,000 km at one point every 10 m.
MAX_FILE_BYTES = 100 * 1024 * 1024


def read_gpx_bytes(path: str | os.PathLike[str]) -> bytes:
    """The bytes of a GPX file: a regular, non-empty file of at most
    :data:`MAX_FILE_BYTES`; every failure is a :class:`GpxError` naming the file."""
    path = Path(path)
    where = str(path)
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise GpxError(f"{where}: no such file; check the path") from None
    except OSError as exc:
        raise GpxError(f"{where}: cannot read the file ({exc.strerror})") from None
    if not path.is_file():
        raise GpxError(f"{where}: not a regular file")
    if size == 0:
        raise GpxError(f"{where}: the file is empty; export the route again")
    if size > MAX_FILE_BYTES:
        raise GpxError(
            f"{where}: {size / 2**20:.0f} MiB is larger than the {MAX_FILE_BYTES / 2**20:.0f} MiB "
            "cardgen reads; split the route or thin its points"
        )
    try:
        with open(path, "rb") as handle:
            data = handle.read(MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise GpxError(f"{where}: cannot read the file ({exc.strerror})") from None
    if len(data) > MAX_FILE_BYTES:  # it grew since the check
        raise GpxError(f"{where}: larger than the {MAX_FILE_BYTES / 2**20:.0f} MiB cardgen reads")
    return data


def read_gpx(path: str | os.PathLike[str]) -> Track:
    """Read a GPX file into a :class:`~cardgen.route.gpx.Track`.

    Raises
    ------
    GpxError
        For anything that is not a usable route, with the file name and, where the
        XML parser knows it, the line.
    """
    return parse_gpx(read_gpx_bytes(path), str(Path(path)))
