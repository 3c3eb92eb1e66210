"""Where a build may write, the lock that keeps builds apart, and publishing.

Publishing swaps the finished folder and the old site in one step where the system
can (``renameat2`` with ``RENAME_EXCHANGE``, Linux 3.15+), so that at every moment
either the old site or the new one is in place. Where it cannot, the old site is
moved aside, the new one renamed in, and a copy moved aside by a build that died
between the two renames is put back by the next build.

Before the swap every file of the new folder, then every folder bottom-up, is
flushed to disk (``fsync``), and after it the folder holding the site: a power cut
at any moment leaves the old site or the new one whole, never a new site with files
the disk had not yet received (on file systems that honour ``fsync``: ext4, XFS,
Btrfs and the like).
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import fcntl
import os
import shutil
from pathlib import Path

from cardgen.build.cache import is_cardgen_site
from cardgen.errors import CardgenError

TMP = ".cardgen-tmp-"
OLD = ".cardgen-old-"
LOCK = ".cardgen-lock"


class BuildError(CardgenError):
    """The build failed; nothing was published."""


def check_output(out: Path, sources: list[Path], theme: Path | None = None) -> Path:
    """The resolved output folder, or a BuildError when building there could lose data.

    Refused: / and the home folder; a folder that is, or holds, one the configuration
    reads from (``sources``); a folder inside the ``theme`` folder (the site would be
    part of its own theme, and every build would change the theme); an existing file;
    an existing folder that is not empty and is not a site cardgen built (it has no
    cardgen manifest); a folder we may not write.
    """
    given = Path(out)
    out = given.resolve()
    if theme is not None and Path(theme).resolve() in out.parents:
        raise BuildError(
            f"output folder {out} is inside the theme folder {Path(theme).resolve()}; the site would become "
            f"part of its own theme; choose a folder outside it, e.g. -o {Path(theme).resolve().parent / 'site'}"
        )
    home = Path.home().resolve()
    if out == Path(out.anchor) or out == home:
        raise BuildError(
            f"output folder {out} is / or your home folder; choose a folder of its own, e.g. -o site"
        )
    for src in sources:
        src = src.resolve()
        if out == src or out in src.parents:
            hint = src if src.is_dir() else src.parent
            raise BuildError(
                f"output folder {out} holds the sources ({src}); choose another, " f"e.g. -o {hint / 'site'}"
            )
    if given.is_symlink():
        raise BuildError(f"output {given} is a symbolic link; give the folder itself, or a new folder")
    if out.exists() and not out.is_dir():
        raise BuildError(
            f"output {out} is a file, not a folder; choose a folder, e.g. -o {out.parent / 'site'}"
        )
    if out.is_dir():
        if any(out.iterdir()) and not is_cardgen_site(out):
            raise BuildError(
                f"output folder {out} holds files that are not a cardgen site (no cardgen "
                f"manifest.json); cardgen replaces its output folder whole, so choose an empty or "
                f"new folder, e.g. -o {out / 'site'}"
            )
        if not os.access(out, os.W_OK | os.X_OK):
            raise BuildError(f"output folder {out} is read-only; make it writable or choose another folder")
    return out


def side_name(out: Path, kind: str, pid: int | None = None) -> Path:
    """The hidden folder beside ``out`` of a kind (TMP, OLD) for a process."""
    return out.parent / f".{out.name}{kind}{os.getpid() if pid is None else pid}"


class Lock:
    """An exclusive lock file beside the output; released when the process ends,
    however it ends."""

    def __init__(self, out: Path):
        self.out = out
        self.path = out.parent / f".{out.name}{LOCK}"

    def __enter__(self) -> Lock:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.handle = open(self.path, "a+")
        try:
            fcntl.flock(self.handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            self.handle.close()
            raise BuildError(
                f"another cardgen build is writing to {self.out} "
                f"(lock {self.path}); wait for it to finish"
            ) from None
        return self

    def __exit__(self, *exc: object) -> None:
        fcntl.flock(self.handle, fcntl.LOCK_UN)
        self.handle.close()


def _dead(pid: int) -> bool:
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:  # exists, owned by someone else
        return False
    return False


def _side_folders(out: Path, kind: str) -> list[tuple[int, Path]]:
    """(pid, path) of the hidden folders of ``kind`` beside ``out`` (no glob: the name
    may hold glob characters)."""
    prefix = f".{out.name}{kind}"
    found: list[tuple[int, Path]] = []
    if not out.parent.is_dir():
        return found
    for path in out.parent.iterdir():
        if path.name.startswith(prefix) and path.name[len(prefix) :].isdigit():
            found.append((int(path.name[len(prefix) :]), path))
    return found


def recover(out: Path) -> list[str]:
    """Tidy up after builds that died (call under the lock). A site moved aside by a
    build that died mid-publish is put back when no site is in place; temporary
    folders of dead builds are removed. Returns what was done, as sentences."""
    done = []
    olds = sorted((p for pid, p in _side_folders(out, OLD) if _dead(pid)), key=lambda p: p.stat().st_mtime)
    if olds and not out.exists():
        os.rename(olds.pop(), out)
        _fsync(out.parent, os.O_RDONLY | os.O_DIRECTORY)
        done.append(f"put back the previous site in {out} (a build had died while publishing)")
    for path in olds + [p for pid, p in _side_folders(out, TMP) if _dead(pid)]:
        shutil.rmtree(path, ignore_errors=True)
    return done


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths in one step (renameat2 RENAME_EXCHANGE); False where the system
    or file system cannot (or CARDGEN_NO_EXCHANGE is set, to try the fallback)."""
    if os.environ.get("CARDGEN_NO_EXCHANGE"):
        return False
    try:
        renameat2 = ctypes.CDLL(None, use_errno=True).renameat2
    except (AttributeError, OSError):
        return False
    at_fdcwd, rename_exchange = -100, 2
    if renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP):
        return False
    raise OSError(err, os.strerror(err), str(b))


def _fsync(path: Path | str, flags: int = os.O_RDONLY) -> None:
    fd = os.open(path, flags | os.O_NOFOLLOW)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def flush_tree(folder: Path) -> None:
    """Flush every regular file under ``folder`` to disk, then every folder from the
    deepest up to ``folder`` itself, so that the names in each folder point at data
    already written. Symbolic links are not followed (their folder records them)."""
    for root, dirs, files in os.walk(folder, topdown=False):
        for name in files:
            path = os.path.join(root, name)
            if not os.path.islink(path):
                _fsync(path)
        del dirs  # flushed as roots of their own, before this one (bottom-up)
        _fsync(root, os.O_RDONLY | os.O_DIRECTORY)


def publish(tmp: Path, out: Path) -> None:
    """Put the finished folder ``tmp`` in place of ``out``; afterwards the old site is
    gone. At every moment one complete site is at ``out`` (or, on file systems that
    cannot swap, in its hidden copy beside it, which :func:`recover` puts back), and
    what is at ``out`` has reached the disk: :func:`flush_tree` before the swap, the
    folder holding ``out`` right after it."""
    flush_tree(tmp)
    old = _swap(tmp, out)
    _fsync(out.parent, os.O_RDONLY | os.O_DIRECTORY)
    if old is not None:
        with contextlib.suppress(OSError):
            shutil.rmtree(old)


def _swap(tmp: Path, out: Path) -> Path | None:
    """Put ``tmp`` at ``out``; return where the old site now is (None: there was none)."""
    if not out.exists():
        os.rename(tmp, out)
        return None
    if _exchange(tmp, out):  # tmp now holds the old site
        return tmp
    old = side_name(out, OLD)
    os.rename(out, old)
    try:
        os.rename(tmp, out)
    except OSError:
        os.rename(old, out)
        raise
    return old
