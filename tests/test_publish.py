"""Publishing never loses data: what a build refuses to replace, how it swaps a site
in, and what the next build does after one died half-way (kills at exact syscalls)."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from buildkit import cardgen_command, leftovers, snapshot

from cardgen.build import publish as publish_module
from cardgen.build.publish import OLD, TMP, recover, side_name
from cardgen.cli import main

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


def _site_src(tmp_path: Path, riders: str = "", routes=("riverside-loop",), extra: str = "") -> Path:
    src = tmp_path / "src"
    src.mkdir()
    for name in routes:
        shutil.copy(SAMPLES / f"{name}.gpx", src)
    body = "".join(f'[[routes]]\ngpx = "{name}.gpx"\n' for name in routes)
    riders = riders or '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n'
    (src / "site.toml").write_text('[site]\ntitle = "T"\n' + extra + body + riders, encoding="utf-8")
    return src


def _build(src: Path, out: Path, *more: str) -> int:
    return main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "1", "--no-pdf", *more])


def test_a_folder_that_is_not_a_site_is_refused_and_kept(tmp_path, capsys):
    src = _site_src(tmp_path)
    out = tmp_path / "thesis"
    out.mkdir()
    (out / "chapter1.tex").write_text("years of work")
    assert _build(src, out) == 1
    assert "not a cardgen site" in capsys.readouterr().err
    assert (out / "chapter1.tex").read_text() == "years of work"
    assert leftovers(out) == []


def test_a_file_as_output_is_refused_and_kept(tmp_path, capsys):
    src = _site_src(tmp_path)
    out = tmp_path / "notes.txt"
    out.write_text("keep me")
    assert _build(src, out) == 1
    assert "is a file" in capsys.readouterr().err
    assert out.read_text() == "keep me"
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".notes")] == []


def test_a_folder_the_configuration_reads_is_refused(tmp_path, capsys):
    src = _site_src(tmp_path, extra='templates = "theme"\n')
    theme = src / "theme"
    theme.mkdir()
    (theme / "style.css").write_text("body { color: #1a1a1a; }")
    assert _build(src, theme) == 1
    assert "holds the sources" in capsys.readouterr().err
    assert (theme / "style.css").is_file()


def test_an_output_inside_the_theme_folder_is_refused(tmp_path, capsys):
    """It made the site part of its own theme: every build changed the theme, so every
    rebuild redid everything (and a template could include the last site's files)."""
    src = _site_src(tmp_path, extra='templates = "theme"\n')
    theme = src / "theme"
    theme.mkdir()
    (theme / "style.css").write_text("body { color: #1a1a1a; }")
    assert _build(src, theme / "site") == 1
    err = capsys.readouterr().err
    assert "inside the theme folder" in err and str(theme) in err
    assert sorted(p.name for p in theme.iterdir()) == ["style.css"]


def test_a_previous_site_and_an_empty_folder_are_replaced(tmp_path):
    src = _site_src(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    assert _build(src, out) == 0  # empty: fine
    (src / "site.toml").write_text((src / "site.toml").read_text().replace('"T"', '"T2"'))
    assert _build(src, out) == 0  # a cardgen site: replaced
    assert "T2" in (out / "index.html").read_text()
    assert leftovers(out) == []


@pytest.mark.parametrize("exchange", [True, False])
def test_publish_swaps_the_site_whole(tmp_path, monkeypatch, exchange):
    if not exchange:
        monkeypatch.setattr(publish_module, "_exchange", lambda a, b: False)
    out, tmp = tmp_path / "site", tmp_path / ".site.cardgen-tmp-1"
    out.mkdir()
    (out / "old.html").write_text("old")
    tmp.mkdir()
    (tmp / "new.html").write_text("new")
    publish_module.publish(tmp, out)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["site"]
    assert [p.name for p in out.iterdir()] == ["new.html"]


def _dead_pid() -> int:
    proc = subprocess.run(
        [sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True
    )
    return int(proc.stdout)


def test_a_site_moved_aside_by_a_dead_build_is_put_back_even_by_a_failing_build(tmp_path, capsys):
    src = _site_src(tmp_path)
    out = tmp_path / "site"
    assert _build(src, out) == 0
    before = snapshot(out)
    aside = side_name(out, OLD, _dead_pid())
    os.rename(out, aside)  # as if killed between the two renames of the fallback
    (src / "riverside-loop.gpx").write_text("<gpx>broken")
    assert _build(src, out) == 1
    err = capsys.readouterr().err
    assert "put back the previous site" in err
    assert snapshot(out) == before
    assert not aside.exists()


def test_recover_leaves_a_live_builds_folders_alone(tmp_path):
    out = tmp_path / "site"
    out.mkdir()
    live = side_name(out, ".cardgen-tmp-")  # this process is alive
    live.mkdir()
    assert recover(out) == []
    assert live.is_dir()


def test_glob_characters_in_the_output_name_leave_nothing_behind(tmp_path):
    out = tmp_path / "out[1]"
    stale = side_name(out, ".cardgen-tmp-", _dead_pid())
    stale.mkdir()
    recover(out)
    assert not stale.exists()


def test_a_read_only_site_is_refused(tmp_path, capsys):
    if os.geteuid() == 0:
        pytest.skip("root may write into a read-only folder; the check is for other users")
    src = _site_src(tmp_path)
    out = tmp_path / "site"
    assert _build(src, out) == 0
    out.chmod(0o555)
    try:
        assert _build(src, out) == 1
        assert "read-only" in capsys.readouterr().err
    finally:
        out.chmod(0o755)


def test_keep_going_with_every_route_failing_publishes_nothing(tmp_path, capsys):
    src = _site_src(tmp_path, routes=("riverside-loop", "accessible-path"))
    out = tmp_path / "site"
    assert _build(src, out) == 0
    before = snapshot(out)
    for name in ("riverside-loop", "accessible-path"):
        (src / f"{name}.gpx").write_text("<gpx>broken")
    capsys.readouterr()
    assert _build(src, out, "--keep-going") == 1
    err = capsys.readouterr().err
    assert "every route failed; nothing was published" in err
    assert "riverside-loop.gpx" in err and "accessible-path.gpx" in err
    assert snapshot(out) == before


def test_keep_going_names_each_failure(tmp_path, capsys):
    src = _site_src(tmp_path, routes=("riverside-loop", "accessible-path"))
    out = tmp_path / "site"
    (src / "accessible-path.gpx").write_text("<gpx>broken")
    assert _build(src, out, "--keep-going") == 1
    captured = capsys.readouterr()
    assert "1 of 2 routes" in captured.out
    assert "accessible-path.gpx" in captured.err
    assert (out / "riverside-loop" / "index.html").is_file()


def test_a_rider_called_coach_keeps_their_card(tmp_path):
    riders = (
        '[[riders]]\nname = "Coach"\nvehicle = "road-hoods"\n[[riders]]\nname = "B"\nvehicle = "handcycle"\n'
    )
    src = _site_src(tmp_path, riders=riders)
    out = tmp_path / "site"
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--jobs", "1"]) == 0
    folder = out / "riverside-loop"
    assert (folder / "coach-2.pdf").is_file() and (folder / "coach.pdf").is_file()
    assert "coach-2.pdf" in (folder / "index.html").read_text()


@pytest.mark.parametrize("args", [["--jobs", "0"], ["--jobs", "-1"], ["--jobs", "65"]])
def test_out_of_range_jobs_is_a_usage_error(tmp_path, args, capsys):
    src = _site_src(tmp_path)
    with pytest.raises(SystemExit) as stop:
        main(["build", str(src / "site.toml"), "-o", str(tmp_path / "s"), *args])
    assert stop.value.code == 2
    assert "outside 1…64" in capsys.readouterr().err


def test_out_of_range_port_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as stop:
        main(["serve", "--port", "70000"])
    assert stop.value.code == 2


def test_the_lock_message_names_the_folder(tmp_path):
    from cardgen.build import BuildError
    from cardgen.build.publish import Lock

    out = tmp_path / "mysite"
    with Lock(out), pytest.raises(BuildError, match=r"writing to \S*/mysite \(lock"), Lock(out):
        pass


STRACE = shutil.which("strace")


@pytest.mark.skipif(STRACE is None, reason="strace is not installed (Debian package 'strace')")
@pytest.mark.parametrize(("syscall", "when"), [("renameat2", 1), ("rename", 1), ("rename", 2)])
def test_killed_at_the_publishing_syscall_a_whole_site_stays(tmp_path, syscall, when):
    """SIGKILL exactly at the first rename-family call of the publishing step: before
    it the old site is in place, after it the new one; never no site."""
    src = _site_src(tmp_path)
    out = tmp_path / "site"
    assert _build(src, out) == 0
    old = snapshot(out)
    (src / "site.toml").write_text((src / "site.toml").read_text().replace('"T"', '"New"'))
    env = dict(os.environ)
    if syscall == "rename":  # the two-rename fallback: make the swap unavailable
        env["CARDGEN_NO_EXCHANGE"] = "1"
    subprocess.run(
        [
            STRACE,
            "-f",
            "-qq",
            "-o",
            os.devnull,
            "-e",
            f"trace={syscall}",
            "-e",
            f"inject={syscall}:signal=SIGKILL:when={when}",
            *cardgen_command(),
            "build",
            str(src / "site.toml"),
            "-o",
            str(out),
            "--jobs",
            "1",
            "--no-pdf",
        ],
        env=env,
        capture_output=True,
        timeout=300,
    )
    if (syscall, when) == ("rename", 2):  # killed between the two renames: only the hidden copy
        assert not out.exists()
        assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".site.cardgen-old-")]
        code = main(["check", str(src / "site.toml")])  # a check writes nothing and needs no site
        assert code == 0
    else:  # killed before the swap: the old site, whole
        assert snapshot(out) == old
    assert _build(src, out) == 0
    assert "New" in (out / "index.html").read_text()
    assert leftovers(out) == []


def _traced_build(src: Path, out: Path, *strace_args: str, env=None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [
            STRACE,
            "-f",
            "-qq",
            *strace_args,
            *cardgen_command(),
            "build",
            str(src / "site.toml"),
            "-o",
            str(out),
            "--jobs",
            "1",
            "--no-pdf",
        ],
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )


@pytest.mark.slow  # two builds each, under strace
@pytest.mark.skipif(STRACE is None, reason="strace is not installed (Debian package 'strace')")
@pytest.mark.parametrize("exchange", [True, False])
def test_every_file_and_folder_is_flushed_before_the_swap(tmp_path, exchange):
    """fsync of every file, then every folder bottom-up, before the rename that
    publishes; the folder holding the site right after it (traced with strace -y,
    which names each descriptor's file)."""
    src = _site_src(tmp_path, routes=("riverside-loop", "accessible-path"))
    out = tmp_path / "site"
    assert _build(src, out) == 0
    (src / "site.toml").write_text((src / "site.toml").read_text().replace('"T"', '"New"'))
    trace = tmp_path / "trace.txt"
    env = dict(os.environ, **({} if exchange else {"CARDGEN_NO_EXCHANGE": "1"}))
    done = _traced_build(
        src, out, "-y", "-o", str(trace), "-e", "trace=fsync,fdatasync,renameat2,rename", env=env
    )
    assert done.returncode == 0, done.stderr
    calls = trace.read_text().splitlines()
    swap = next(i for i, c in enumerate(calls) if "rename" in c)  # the first: the one that publishes
    flushed = [c.split("<", 1)[1].split(">", 1)[0] for c in calls[:swap] if "fsync(" in c]
    tmp = flushed[-1]  # the new site's own folder, last
    assert TMP in Path(tmp).name
    order = [Path(f).relative_to(tmp).as_posix() for f in flushed if f.startswith(tmp)]
    assert set(order) == {p.relative_to(out).as_posix() for p in out.rglob("*")} | {"."}
    assert order.index("riverside-loop/index.html") < order.index("riverside-loop") < order.index(".")
    after = [c for c in calls[swap + 1 :] if "fsync(" in c]
    assert after and f"<{tmp_path}>" in after[0]  # the rename itself made durable


@pytest.mark.slow  # three builds each, one under strace
@pytest.mark.skipif(STRACE is None, reason="strace is not installed (Debian package 'strace')")
@pytest.mark.parametrize("when", [1, 12])
def test_killed_while_flushing_the_old_site_stays(tmp_path, when):
    src = _site_src(tmp_path)
    out = tmp_path / "site"
    assert _build(src, out) == 0
    old = snapshot(out)
    (src / "site.toml").write_text((src / "site.toml").read_text().replace('"T"', '"New"'))
    _traced_build(
        src, out, "-o", os.devnull, "-e", "trace=fsync", "-e", f"inject=fsync:signal=SIGKILL:when={when}"
    )
    assert snapshot(out) == old
    assert _build(src, out) == 0
    assert "New" in (out / "index.html").read_text()
    assert leftovers(out) == []
