"""Failure injection in the build: disk full, permissions, a dying worker, Ctrl-C.
Each ends with a clear message and exit code 1 (130 for Ctrl-C), no temporary
folders left behind, and the previous site as it was."""

import errno
import os
import pathlib
import shutil
import signal
import subprocess
from pathlib import Path

import pytest
from buildkit import cardgen_command, leftovers, snapshot

from cardgen.build import pipeline as build_module
from cardgen.cli import main
from cardgen.config import load_config

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


def _site(tmp_path: Path) -> tuple[Path, Path]:
    src = tmp_path / "src"
    src.mkdir()
    shutil.copy(SAMPLES / "riverside-loop.gpx", src)
    shutil.copy(SAMPLES / "accessible-path.gpx", src)
    (src / "site.toml").write_text(
        '[site]\ntitle = "One"\n[[routes]]\ngpx = "riverside-loop.gpx"\n'
        '[[routes]]\ngpx = "accessible-path.gpx"\n'
        '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n'
        '[[riders]]\nname = "B"\nvehicle = "trike-recumbent"\n',
        encoding="utf-8",
    )
    out = tmp_path / "out"
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"]) == 0
    # a new title and a change to rider A: A's cards and the coach sheets render again
    text = (src / "site.toml").read_text().replace('"One"', '"Two"').replace('"road-hoods"', '"road-drops"')
    (src / "site.toml").write_text(text)
    return src, out


def _clean(out: Path) -> bool:
    return not leftovers(out)


def test_disk_full_while_writing(tmp_path, monkeypatch, capsys):
    src, out = _site(tmp_path)
    before = snapshot(out)
    real = pathlib.Path.write_text

    def full(self, *args, **kwargs):
        if ".cardgen-tmp-" in str(self) and self.name == "plan.json":
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(self))
        return real(self, *args, **kwargs)

    monkeypatch.setattr(pathlib.Path, "write_text", full)
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"]) == 1
    err = capsys.readouterr().err
    assert "No space left on device" in err and "previous output is unchanged" in err
    assert "Traceback" not in err
    assert snapshot(out) == before and _clean(out)


def test_permission_denied_on_the_output_folder(tmp_path, monkeypatch, capsys):
    # CI runs as root, which ignores permission bits, so the error is injected where
    # the build creates its temporary folder beside the output.
    src, out = _site(tmp_path)
    before = snapshot(out)
    real = pathlib.Path.mkdir

    def denied(self, *args, **kwargs):
        if ".cardgen-tmp-" in self.name:
            raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(self))
        return real(self, *args, **kwargs)

    monkeypatch.setattr(pathlib.Path, "mkdir", denied)
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"]) == 1
    err = capsys.readouterr().err
    assert "Permission denied" in err and "Traceback" not in err
    assert snapshot(out) == before and _clean(out)


def _die(cards):
    os._exit(9)  # the worker vanishes without a word, as under the out-of-memory killer


def test_a_worker_process_dies(tmp_path, monkeypatch, capsys):
    src, out = _site(tmp_path)
    before = snapshot(out)
    monkeypatch.setattr(build_module, "_render_pdfs", _die)
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "2"]) == 1
    err = capsys.readouterr().err
    assert "card-rendering process died" in err and "Traceback" not in err
    assert snapshot(out) == before and _clean(out)


def _ignores_sigint(pid: int) -> bool | None:
    """Whether process ``pid`` ignores SIGINT (Linux: the SigIgn mask in
    /proc/PID/status; None where it cannot be read): a process started with SIGINT
    ignored keeps ignoring it, and Python then installs no KeyboardInterrupt handler."""
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return None
    mask = next((line.split()[1] for line in status.splitlines() if line.startswith("SigIgn:")), None)
    return None if mask is None else bool(int(mask, 16) & (1 << (signal.SIGINT - 1)))


def test_ctrl_c_during_rendering(tmp_path):
    src, out = _site(tmp_path)
    before = snapshot(out)
    proc = subprocess.Popen(
        [*cardgen_command(), "build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    # the first card's progress line: the build is rendering, with cards still to make
    # (waiting a fixed moment after its temporary folder appeared once let a fast
    # build finish first, exit 0, on a loaded machine)
    seen = []
    while not seen or not seen[-1].startswith("card 1/"):
        line = proc.stderr.readline()
        assert line, "the build ended before it rendered a card: " + "".join(seen)
        seen.append(line)
    ignored = _ignores_sigint(proc.pid)  # said if the build runs on regardless
    proc.send_signal(signal.SIGINT)
    stdout, rest = proc.communicate(timeout=60)
    stderr = "".join(seen) + rest
    assert proc.returncode == 130, f"SIGINT ignored by the process: {ignored}\n{stderr}"
    assert "interrupted" in stderr and "Traceback" not in stderr
    assert snapshot(out) == before and _clean(out)


@pytest.mark.parametrize("name", ["../../escape", "/etc/passwd", "..", ".", "", "CON", "a/b\\c", "\u202e🚲"])
def test_route_names_become_safe_slugs(name):
    from cardgen.render.html import slugify

    slug = slugify(name)
    assert slug and slug not in (".", "..")
    assert all(c.isascii() and (c.isalnum() or c == "-") for c in slug)


def test_output_may_not_be_the_home_folder(tmp_path, monkeypatch, capsys):
    src, _ = _site(tmp_path)
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    (tmp_path / "home").mkdir()
    assert main(["build", str(src / "site.toml"), "-o", str(tmp_path / "home")]) == 1
    assert "home folder" in capsys.readouterr().err


def test_ctrl_c_wrapped_by_a_first_import_is_still_an_interruption(monkeypatch, capsys):
    """SIGINT while Python runs a class body's ``__set_name__`` (matplotlib's first
    import, under load) arrives as RuntimeError caused by KeyboardInterrupt: still the
    one line and exit 130, no traceback."""
    import cardgen.cli.solve as solve_module
    from cardgen.cli import main

    def interrupted(_args):
        try:
            raise KeyboardInterrupt
        except KeyboardInterrupt as exc:
            raise RuntimeError("Error calling __set_name__ on 'x' instance 'y' in 'Z'") from exc

    monkeypatch.setattr(solve_module, "cmd_solve", interrupted)
    assert main(["solve", "--power", "150"]) == 130
    err = capsys.readouterr().err
    assert "interrupted" in err and "Traceback" not in err


@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_ctrl_c_that_a_callback_drops_still_stops_the_build(tmp_path, monkeypatch):
    """Seen on the old code (1 of 40 builds sent SIGINT at a random moment): the
    KeyboardInterrupt arrived inside a weakref callback run by the XML parser reading
    the GPX, where Python prints and drops it; the build ran on, published and exited
    0. Here the signal comes inside such a callback during planning: the build stops
    before publishing and leaves the previous site as it was."""
    import weakref

    src, out = _site(tmp_path)
    before = snapshot(out)
    real = build_module._plan_routes

    def plan_with_a_dropped_ctrl_c(*args, **kwargs):
        class Thing:
            pass

        thing = Thing()
        # the handler runs inside the callback, so its KeyboardInterrupt is dropped
        ref = weakref.ref(thing, lambda _: signal.raise_signal(signal.SIGINT))
        del thing
        assert ref() is None
        return real(*args, **kwargs)

    monkeypatch.setattr(build_module, "_plan_routes", plan_with_a_dropped_ctrl_c)
    with pytest.raises(KeyboardInterrupt, match="nothing was published"):
        build_module.build_site(load_config(src / "site.toml"), out, jobs=1)
    assert snapshot(out) == before and _clean(out)
    assert signal.getsignal(signal.SIGINT) is signal.default_int_handler  # put back
