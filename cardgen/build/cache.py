"""What a rebuild may reuse: content hashes of every input, and the manifest that
records them in a built site."""

from __future__ import annotations

import hashlib
import json
import os
import stat
from pathlib import Path

#: The manifest's name in a built site; its ``generator`` marks the folder as cardgen's.
MANIFEST = "manifest.json"
GENERATOR = "cardgen"


def digest(*parts) -> str:
    """SHA-256 of the parts (bytes as they are, anything else as its text)."""
    h = hashlib.sha256()
    for part in parts:
        h.update(part if isinstance(part, bytes) else str(part).encode("utf-8"))
        h.update(b"\0")
    return h.hexdigest()


def file_digest(path: Path, limit: int) -> str:
    """SHA-256 of a regular file read in chunks; a file over ``limit`` bytes, or one
    that is not a regular file, is keyed by its size and time only (the reader refuses
    it later with a clear message; nothing here reads it whole or waits on it)."""
    st = os.stat(path)
    if not stat.S_ISREG(st.st_mode) or st.st_size > limit:
        return digest("not read", path, st.st_mode, st.st_size, st.st_mtime_ns)
    h = hashlib.sha256()
    with open(path, "rb") as handle:
        while chunk := handle.read(1 << 20):
            h.update(chunk)
    return h.hexdigest()


def templates_digest(folders: list[Path]) -> str:
    """SHA-256 of every template file (names and bytes) in ``folders``, in order."""
    h = hashlib.sha256()
    for folder in folders:
        # the templates themselves, not the byte code Python leaves beside the package's __init__
        for path in sorted(
            p
            for p in Path(folder).rglob("*")
            if p.is_file() and "__pycache__" not in p.parts and p.suffix != ".pyc"
        ):
            h.update(
                str(path.relative_to(folder)).encode() + b"\0" + file_digest(path, 1 << 24).encode() + b"\0"
            )
    return h.hexdigest()


def read_manifest(site: Path) -> dict:
    """The manifest of a built site, or {} when there is none (or it is unreadable)."""
    try:
        data = json.loads((site / MANIFEST).read_text(encoding="utf-8"))
        return data if isinstance(data, dict) else {}
    except (OSError, ValueError):
        return {}


def is_cardgen_site(folder: Path) -> bool:
    """Whether ``folder`` holds a site that cardgen built (its manifest says so)."""
    manifest = read_manifest(folder)
    return isinstance(manifest.get("routes"), dict) and "version" in manifest


def write_manifest(site: Path, manifest: dict) -> None:
    manifest = {**manifest, "generator": GENERATOR}
    (site / MANIFEST).write_text(json.dumps(manifest, indent=1, sort_keys=True) + "\n", encoding="utf-8")
