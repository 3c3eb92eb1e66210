"""Hostile and careless input beyond GPX files: site configurations, themes, names,
the environment, and the preview server. Each case is a row of the second table in
tests/hostile/README.md (a test below checks the table names every case here)."""

from __future__ import annotations

import contextlib
import csv
import io
import json
import os
import shutil
import socket
import threading
import time
import urllib.error
import urllib.request
from pathlib import Path

import pytest
from buildkit import serving, snapshot

from cardgen.cli import main
from cardgen.serve import file_state, watch

pytestmark = pytest.mark.slow  # builds small sites

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
RIDER = '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n'


def _src(tmp_path: Path, riders: str = RIDER, site: str = "", event: str = "") -> Path:
    src = tmp_path / "src"
    src.mkdir(exist_ok=True)
    shutil.copy(SAMPLES / "riverside-loop.gpx", src)
    text = f'[site]\ntitle = "T"\n{site}' + (f"[event]\n{event}" if event else "")
    (src / "site.toml").write_text(
        text + '[[routes]]\ngpx = "riverside-loop.gpx"\n' + riders, encoding="utf-8"
    )
    return src


def _run(*args: str) -> int:
    return main([*args])


def _one_line_error(capsys, code: int, *words: str) -> str:
    err = capsys.readouterr().err
    assert code == 1, err
    assert "Traceback" not in err
    for word in words:
        assert word in err, err
    return err


# --- the table of cases (kept in step with tests/hostile/README.md) ----------------
CASES = {
    "csv-formula-names": "riders named =HYPERLINK(…), +cmd|…, @SUM(…), -2+3: neutralised in climbs.csv",
    "base-url-javascript": "base_url = javascript:…: refused in check",
    "base-url-3000-chars": "a 3,000-character base_url: refused in check",
    "event-year-9999": "an event on 9999-12-31 at 23:00: refused (years 1900…2200)",
    "event-year-1": "an event on 0001-01-01: refused",
    "huge-integer": "cp_w with 400 digits: one message, no overflow",
    "site-as-array": "[[site]] instead of [site]: one message",
    "riders-not-tables": "riders = [0]: one message",
    "vehicle-sources-number": "a vehicle profile with sources = 5: one message",
    "vehicle-motor-list": 'a vehicle profile with motor = ["x"]: one message',
    "vehicle-base-list": 'a vehicle profile with base = ["x"]: one message',
    "config-is-fifo": "site.toml is a FIFO: refused before reading, no hang",
    "vehicle-is-dev-zero": "a vehicle profile that is /dev/zero: refused before reading",
    "theme-css-symlink": "a theme's style.css linking to a file outside the theme: refused",
    "theme-include-symlink": "{% include %} of a template linking outside the theme: refused",
    "theme-hard-link-js": "a theme's find.js hard-linked to a file outside the theme: refused, nothing published",
    "theme-hard-link-include": "{% include %} of a template hard-linked to a file outside the theme: refused",
    "theme-python-escape": "a theme reaching Python internals (__class__.__mro__): stopped by the sandbox",
    "theme-syntax-error": "a theme template with a syntax error: one line with file and line",
    "theme-undefined-name": "a theme template using an undefined name: one line with the file",
    "theme-includes-itself": "a template that includes itself: one line, the previous site intact",
    "theme-extends-itself": "a template that extends itself: one line, the previous site intact",
    "theme-range-1e9": "range(10**9) in a template: one line, the previous site intact",
    "theme-string-1e10": "'x' * 10**10 in a template: refused before allocating, one line",
    "theme-nested-loops": "nested range(100000) loops: stopped at the render time bound (60 s), one line",
    "theme-memory": "a template making a string larger than the render memory bound (1 GiB): one line",
    "source-date-epoch-text": "SOURCE_DATE_EPOCH=abc or huge: ignored with a warning",
    "math-in-names": "names with $…$ and \\sqrt{ in plots: drawn literally, no traceback",
    "underscore-name-in-legend": "a rider named _hidden stays in the power chart's legend",
    "control-characters": "escape sequences in names are not written raw to the terminal",
    "too-weak-rider": "a rider too weak to finish: a warning where, valid JSON, no overflow with a start",
    "serve-nul-byte": "serve: %00 in the path answers 400",
    "serve-symlink-out": "serve: a link out of the site answers 404",
    "serve-disconnect": "serve: clients that hang up print nothing",
    "serve-idle-connection": "serve: a half-sent request is dropped after the idle timeout",
    "serve-trickled-headers": "serve: a request sent a byte at a time is cut off at the header time bound (10 s)",
    "serve-slots-full": "serve: 40 half-sent requests hold 32 slots; a new GET is answered at once",
    "rebuild-reuse-symlink": "a rebuild reusing a route keeps a link inside it as a link (no hard links to its target)",
    "watch-unexpected-error": "serve --watch: any error is reported once and the watch goes on",
    "watch-polls-times-only": "serve --watch: the configuration is read again only when a file changes",
    "check-10000-riders": "check of 10,000 riders: linear (line numbers indexed once)",
    "negative-zero": "a flat route prints its climbing as 0 m, never as --0 m",
    "solve-implausible-speed": "solve at 146 km/h says the model does not hold there",
    "csv-cr-line-endings": "an entrants CSV with old-Mac CR-only line endings: read, every rider",
    "csv-cell-200k": "an entrants CSV cell of 200,000 characters: refused with its row (cells up to 131,072)",
    "csv-quote-left-open": "an entrants CSV with a quote never closed: refused with its row",
    "csv-extra-cells": "an entrants CSV row with more cells than the header: refused with its row, never dropped",
    "toml-nested-50000": "a site.toml with 50,000 nested [: not valid TOML, one message (no RecursionError)",
    "gpx-absolute-pattern": 'gpx = "/abs/folder/*.gpx": the pattern is read from that folder',
    "gpx-symlink-loop": "a GPX file that is a symbolic link to itself: one message naming the key",
    "gpx-nul-in-name": 'gpx = "t\\u0000.gpx": one message (no ValueError: embedded null byte)',
    "pattern-never-matches-the-site": 'routes = "**/*.gpx" with the site built inside the event folder: rebuilds work',
    "csv-thousands-separator": 'an entrants CSV battery_wh of "1,000": refused with row, column and the number format',
    "csv-underscore-number": "an entrants CSV battery_wh of 2_00: refused with row and column (it was read as 200)",
    "csv-etc-passwd": 'riders = "/etc/passwd": the count of unknown columns and the expected names, none of its text',
    "checkpoint-nan": "checkpoints = [nan]: refused by check and by build alike",
    "cue-text-nan": 'cue_texts = ["nan = …"]: refused by check and by build alike',
    "cue-text-inf": 'cue_texts = ["inf = …"]: refused by check and by build alike',
    "cue-text-1e308": 'cue_texts = ["1e308 = …"]: refused by check and by build alike',
    "cue-text-99999": 'cue_texts = ["99999 = …"]: refused by check and by build alike (beyond 10,000 km)',
    "cue-text-underscore": 'cue_texts = ["1_5 = …"]: refused by check and by build alike (it was read as 15 km)',
    "cue-text-off-the-cues": "a cue text at 10 km, where the route has no cue: refused by check as by build",
    "title-nul": "a NUL character in the title (it was published raw into index.html): refused with its key",
    "rider-name-escape": "an escape sequence in a rider's name: refused with its key, the message printing none of it",
    "csv-name-nul": "a NUL character in a rider's name in the entrants CSV: refused with row and column",
    "base-url-no-host": 'base_url = "http://" (QR codes for http:///…): refused',
    "check-10000-riders-lines": "check of 10,000 riders: the riders are counted, no line of 188,902 characters",
}

#: The cases that are a site's input files and commands, and their outcome:
#: ("error", words…): exit 1, a line holding all the words, no traceback, and a build
#: publishes nothing; ("ok", words…): exit 0 and the words in the output. Each case:
#: (parts of site.toml, {file: bytes or ("link", target)}, commands, outcome). The parts
#: "top" (before [site]), "site" (in place of [site] with its title), "route" (more
#: keys of the one route), "routes" (in place of it) and "riders" (in place of one
#: road-bike rider); "{src}" is the site's folder.
#: A case run by both check and build checks that the two agree.
CSV_RIDERS = {"top": 'riders = "entrants.csv"\n', "riders": ""}
INPUTS = {
    "csv-cr-line-endings": (
        CSV_RIDERS,
        {"entrants.csv": b"name,vehicle\rAda,road-hoods\rBea,handcycle\r"},
        ("check",),
        ("ok", "Ada", "Bea", "configuration and routes are fine"),
    ),
    "csv-cell-200k": (
        CSV_RIDERS,
        {"entrants.csv": b"name,vehicle\nAda,road-hoods\n" + b"B" * 200_000 + b",handcycle\n"},
        ("build",),
        ("error", "entrants.csv:row 3", "longer than 131,072 characters"),
    ),
    "csv-quote-left-open": (
        CSV_RIDERS,
        {"entrants.csv": b'name,vehicle\nAda,road-hoods\n"Bea,handcycle\nCy,tandem\n'},
        ("check",),
        ("error", "entrants.csv:row 3", "never closed"),
    ),
    "csv-extra-cells": (
        CSV_RIDERS,
        {"entrants.csv": b"name,vehicle\nAda,road-hoods,250\nBea,handcycle,,\n"},
        ("check",),
        ("error", "entrants.csv:row 2", "more cells than the header has columns (2)"),
    ),
    "csv-thousands-separator": (
        CSV_RIDERS,
        {"entrants.csv": b'name,vehicle,battery_wh\nAda,e-assist-city,"1,000"\n'},
        ("check", "build"),
        ("error", "entrants.csv:row 2, column battery_wh", "'1,000'", "no thousands separators"),
    ),
    "csv-underscore-number": (
        CSV_RIDERS,
        {"entrants.csv": b"name,vehicle,battery_wh\nAda,e-assist-city,2_00\n"},
        ("check", "build"),
        ("error", "entrants.csv:row 2, column battery_wh", "'2_00'"),
    ),
    "csv-etc-passwd": (
        {"top": 'riders = "/etc/passwd"\n', "riders": ""},
        {},
        ("check",),
        ("error", "/etc/passwd:row 1: 1 unknown column (column 1)", "names the keys of [[riders]]: name"),
    ),
    "gpx-absolute-pattern": (
        {"top": 'routes = "{src}/*.gpx"\n', "routes": ""},
        {},
        ("check",),
        ("ok", "riverside-loop.gpx", "configuration and routes are fine"),
    ),
    "gpx-symlink-loop": (
        {"routes": '[[routes]]\ngpx = "loop.gpx"\n'},
        {"loop.gpx": ("link", "loop.gpx")},
        ("check", "build"),
        ("error", "routes[0].gpx", "loop.gpx is a symbolic link that leads back to itself"),
    ),
    "gpx-nul-in-name": (
        {"routes": '[[routes]]\ngpx = "t\\u0000.gpx"\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].gpx", "NUL character"),
    ),
    "toml-nested-50000": (
        {"top": "x = " + "[" * 50_000 + "]" * 50_000 + "\n"},
        {},
        ("build",),
        ("error", "site.toml: not valid TOML", "nested too deeply"),
    ),
    "checkpoint-nan": (
        {"route": "checkpoints = [nan]\n"},
        {},
        ("check", "build"),
        ("error", "routes[0].checkpoints", "nan is not a distance"),
    ),
    "cue-text-nan": (
        {"route": 'cue_texts = ["nan = Left"]\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].cue_texts", "'nan = Left'"),
    ),
    "cue-text-inf": (
        {"route": 'cue_texts = ["inf = Left"]\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].cue_texts", "'inf = Left'"),
    ),
    "cue-text-1e308": (
        {"route": 'cue_texts = ["1e308 = Left"]\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].cue_texts", "'1e308 = Left'"),
    ),
    "cue-text-99999": (
        {"route": 'cue_texts = ["99999 = Left"]\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].cue_texts", "between 0 and 10,000"),
    ),
    "cue-text-off-the-cues": (
        {"route": 'cue_texts = ["10 = Left at the mill"]\n'},
        {},
        ("check", "build"),
        ("error", "riverside-loop.gpx", "no cue within 150 m of 10 km"),
    ),
    "title-nul": (
        {"site": '[site]\ntitle = "Spring\\u0000ride"\n'},
        {},
        ("check", "build"),
        ("error", "site.title", "control character (U+0000) at character 7"),
    ),
    "rider-name-escape": (
        {"riders": '[[riders]]\nname = "Ada \\u001b[31mRED"\nvehicle = "road-hoods"\n'},
        {},
        ("check", "build"),
        ("error", "riders[0].name", "control character (U+001B)"),
    ),
    "csv-name-nul": (
        CSV_RIDERS,
        {"entrants.csv": b"name,vehicle\nAda\x00,road-hoods\n"},
        ("check", "build"),
        ("error", "entrants.csv:row 2, column name", "control character (U+0000)"),
    ),
    "base-url-no-host": (
        {"site": '[site]\ntitle = "T"\nbase_url = "http://"\n'},
        {},
        ("check", "build"),
        ("error", "site.base_url", "with a host name"),
    ),
    "cue-text-underscore": (
        {"route": 'cue_texts = ["1_5 = Left"]\n'},
        {},
        ("check", "build"),
        ("error", "routes[0].cue_texts", "'1_5 = Left'"),
    ),
}


def _input_site(src: Path, parts: dict, files: dict) -> None:
    src.mkdir()
    shutil.copy(SAMPLES / "riverside-loop.gpx", src)
    routes = parts.get("routes", '[[routes]]\ngpx = "riverside-loop.gpx"\n' + parts.get("route", ""))
    site = parts.get("site", '[site]\ntitle = "T"\n')
    text = parts.get("top", "") + site + routes + parts.get("riders", RIDER)
    (src / "site.toml").write_text(text.replace("{src}", str(src)), encoding="utf-8")
    for file, data in files.items():
        if isinstance(data, tuple):  # ("link", target)
            (src / file).symlink_to(data[1])
        else:
            (src / file).write_bytes(data)


@pytest.mark.parametrize("name", list(INPUTS))
def test_input_case(tmp_path, capsys, name):
    parts, files, commands, (kind, *words) = INPUTS[name]
    assert name in CASES
    _input_site(tmp_path / "src", parts, files)
    out = tmp_path / "site"
    for command in commands:
        args = [command, str(tmp_path / "src" / "site.toml")]
        code = _run(*args, *(["-o", str(out), "--no-pdf", "--jobs", "1"] if command == "build" else []))
        captured = capsys.readouterr()
        assert "Traceback" not in captured.err
        if kind == "ok":
            assert code == 0, captured.err
            assert all(word in captured.out for word in words), captured.out
            continue
        assert code == 1, (command, captured.err)
        lines = captured.err.splitlines()
        assert any(all(word in line for word in words) for line in lines), (command, captured.err)
        assert not out.exists()


def test_pattern_never_matches_the_site(tmp_path, capsys):
    """The site's own route.gpx files (and a build's hidden folders) are no routes."""
    src = tmp_path / "event"
    (src / "routes").mkdir(parents=True)
    shutil.copy(SAMPLES / "riverside-loop.gpx", src / "routes")
    (src / "site.toml").write_text('routes = "**/*.gpx"\n[site]\ntitle = "T"\n' + RIDER, encoding="utf-8")
    for _ in range(2):  # the second build sees the first site inside the event folder
        assert _run("build", str(src / "site.toml"), "--no-pdf", "--jobs", "1") == 0, capsys.readouterr().err
    assert (src / "site" / "riverside-loop" / "route.gpx").is_file()
    capsys.readouterr()
    assert _run("check", str(src / "site.toml")) == 0
    routes = [line for line in capsys.readouterr().out.splitlines() if line.startswith("ok ")]
    assert len(routes) == 1 and "riverside-loop.gpx" in routes[0], routes


def test_the_readme_table_lists_every_case():
    readme = (Path(__file__).parent / "hostile" / "README.md").read_text(encoding="utf-8")
    for name, what in CASES.items():
        assert f"| `{name}` | {what} |" in readme, name


# --- the cases --------------------------------------------------------------------


def _riders(names: list[str]) -> str:
    """[[riders]] tables for these names (JSON strings are valid TOML strings)."""
    return "".join(f'[[riders]]\nname = {json.dumps(n)}\nvehicle = "road-hoods"\n' for n in names)


def test_csv_formula_names(tmp_path):
    names = ['=HYPERLINK("http://x")', "+cmd|' /C calc'!A0", "@SUM(1+1)", "-2+3"]
    src = _src(tmp_path, riders=_riders(names))
    shutil.copy(SAMPLES / "hill-loop.gpx", src / "riverside-loop.gpx")  # a route with a climb
    out = tmp_path / "site"
    assert _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1") == 0
    rows = list(csv.reader(io.StringIO((out / "riverside-loop" / "climbs.csv").read_text())))[1:]
    cells = {row[0] for row in rows}
    assert cells == {"'" + n for n in names}, cells
    assert all(not row[3].startswith("'") for row in rows)  # numbers stay numbers


@pytest.mark.parametrize("url", ["javascript:alert(1)", "https://example.org/" + "x" * 3000])
def test_base_url(tmp_path, capsys, url):
    src = _src(tmp_path, site=f'base_url = "{url}"\n')
    _one_line_error(capsys, _run("check", str(src / "site.toml")), "base_url", "http")


@pytest.mark.parametrize(("day", "clock"), [("9999-12-31", "23:00"), ("0001-01-01", "00:05")])
def test_event_years(tmp_path, capsys, day, clock):
    src = _src(tmp_path, event=f'date = "{day}"\nstart = "{clock}"\ncheckpoint_margin_min = 30\n')
    _one_line_error(capsys, _run("check", str(src / "site.toml")), "event.date", "1900")


@pytest.mark.parametrize(
    ("text", "words"),
    [
        ('[[riders]]\nname = "A"\nvehicle = "road-hoods"\ncp_w = ' + "9" * 400 + "\n", ("cp_w", "finite")),
        ("[[site]]\ntitle = 'x'\n" + RIDER, ("site must be a [site] table",)),
        ("riders = [0]\n", ("riders",)),
    ],
)
def test_config_shapes(tmp_path, capsys, text, words):
    src = _src(tmp_path, riders="")
    base = (src / "site.toml").read_text().replace('[site]\ntitle = "T"\n', "")
    (src / "site.toml").write_text(text + base if text.startswith(("[[site]]", "riders")) else base + text)
    _one_line_error(capsys, _run("check", str(src / "site.toml")), *words)


@pytest.mark.parametrize(
    ("profile", "word"),
    [
        ('[mine]\nbase = "road-hoods"\nsources = 5\n', "sources"),
        ('[mine]\nbase = "road-hoods"\nmotor = ["x"]\n', "motor"),
        ('[mine]\nbase = ["x"]\n', "base"),
    ],
)
def test_vehicle_profile_shapes(tmp_path, capsys, profile, word):
    (tmp_path / "mine.toml").write_text(profile)
    code = _run("solve", "--vehicle", str(tmp_path / "mine.toml"), "--power", "100")
    _one_line_error(capsys, code, "mine.toml", word)


def test_config_is_a_fifo(tmp_path, capsys):
    fifo = tmp_path / "site.toml"
    os.mkfifo(fifo)
    _one_line_error(capsys, _run("check", str(fifo)), "not a regular file")


def test_vehicle_is_dev_zero(tmp_path, capsys):
    src = _src(tmp_path, riders='[[riders]]\nname = "A"\nvehicle = "zero.toml"\n')
    (src / "zero.toml").symlink_to("/dev/zero")
    _one_line_error(capsys, _run("check", str(src / "site.toml")), "not a regular file")


def _theme(src: Path) -> Path:
    theme = src / "theme"
    theme.mkdir()
    (src / "site.toml").write_text(
        (src / "site.toml").read_text().replace('title = "T"\n', 'title = "T"\ntemplates = "theme"\n')
    )
    return theme


def test_theme_css_symlink(tmp_path, capsys):
    src = _src(tmp_path)
    (_theme(src) / "style.css").symlink_to("/etc/passwd")
    out = tmp_path / "site"
    _one_line_error(
        capsys, _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf"), "link out of the theme"
    )
    assert not out.exists()


def test_theme_include_symlink(tmp_path, capsys):
    src = _src(tmp_path)
    theme = _theme(src)
    (theme / "leak.txt").symlink_to("/etc/passwd")
    index = (Path(__file__).resolve().parents[1] / "templates" / "index.html").read_text()
    (theme / "index.html").write_text(index.replace("<h1>", "{% include 'leak.txt' %}<h1>", 1))
    out = tmp_path / "site"
    code = _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf")
    _one_line_error(capsys, code, "leak.txt")
    assert not out.exists()


@pytest.mark.parametrize("include", [False, True])
def test_theme_hard_link(tmp_path, capsys, include):
    """A hard link has no target to check: it is another name of the same file, which
    may lie outside the theme. Theme files with more than one name are refused."""
    src = _src(tmp_path)
    theme = _theme(src)
    secret = tmp_path / "secret.txt"
    secret.write_text("the organiser's private notes")
    if include:
        os.link(secret, theme / "notes.txt")
        index = (Path(__file__).resolve().parents[1] / "templates" / "index.html").read_text()
        (theme / "index.html").write_text(index.replace("<h1>", "{% include 'notes.txt' %}<h1>", 1))
    else:
        os.link(secret, theme / "find.js")
    out = tmp_path / "site"
    code = _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1")
    _one_line_error(capsys, code, "notes.txt" if include else "find.js", "hard link")
    assert not out.exists()


def test_theme_python_escape(tmp_path, capsys):
    src = _src(tmp_path)
    theme = _theme(src)
    index = (Path(__file__).resolve().parents[1] / "templates" / "index.html").read_text()
    (theme / "index.html").write_text(
        index.replace("<h1>", "{{ ''.__class__.__mro__[1].__subclasses__() }}<h1>", 1)
    )
    code = _run("build", str(src / "site.toml"), "-o", str(tmp_path / "site"), "--no-pdf")
    err = _one_line_error(capsys, code, "index.html")
    assert "unsafe" in err or "__class__" in err


@pytest.mark.parametrize(
    ("body", "words"),
    [("{% if %}", ("index.html", "line")), ("{{ no_such_name }}", ("index.html", "no_such_name"))],
)
def test_theme_template_mistakes(tmp_path, capsys, body, words):
    src = _src(tmp_path)
    theme = _theme(src)
    (theme / "index.html").write_text("<!DOCTYPE html>\n<p>\n" + body + "\n")
    code = _run("build", str(src / "site.toml"), "-o", str(tmp_path / "site"), "--no-pdf")
    _one_line_error(capsys, code, *words)


@pytest.fixture(scope="module")
def themed_site(tmp_path_factory):
    """A site built with an (empty) theme folder: the previous site of the theme cases."""
    folder = tmp_path_factory.mktemp("themed")
    src = _src(folder)
    _theme(src)
    out = folder / "site"
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1"]) == 0
    return src, out


@pytest.mark.parametrize(
    ("case", "body", "words", "bound"),
    [
        ("theme-includes-itself", "{% include 'index.html' %}", ("includes or extends itself",), None),
        ("theme-extends-itself", "{% extends 'index.html' %}", ("includes or extends itself",), None),
        ("theme-range-1e9", "{% for i in range(10**9) %}{% endfor %}", ("Range too big",), None),
        ("theme-string-1e10", "{{ 'x' * 10**10 }}", ("10,000,000,000 items",), None),
        (
            "theme-nested-loops",
            "{% for i in range(100000) %}{% for j in range(100000) %}{% endfor %}{% endfor %}",
            ("rendering took over 1 s",),
            ("RENDER_SECONDS", 1.0),
        ),
        (
            "theme-memory",
            "{{ ('x'|center(300000000))[:3] }}",
            ("more than 64 MiB of memory",),
            ("RENDER_BYTES", 64 << 20),
        ),
    ],
)
def test_theme_render_bounds(tmp_path, capsys, monkeypatch, themed_site, case, body, words, bound):
    """A theme's mistakes end in one line naming the template, and the site built
    before stays as it was (the bounds: cardgen/render/sandbox.py; a bound is made
    small here so that the case runs in a second)."""
    assert case in CASES
    if bound:
        from cardgen.render import sandbox

        monkeypatch.setattr(sandbox, *bound)
    src, built = themed_site
    out = tmp_path / "site"
    shutil.copytree(built, out)
    before = snapshot(out)
    shutil.copytree(src, tmp_path / "src")
    theme = tmp_path / "src" / "theme"
    (theme / "index.html").write_text("<!DOCTYPE html>\n<p>\n" + body + "\n")
    code = _run("build", str(tmp_path / "src" / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1")
    err = _one_line_error(capsys, code, "index.html", *words)
    assert [line for line in err.splitlines() if "error" in line] == [err.splitlines()[-1]], err
    assert snapshot(out) == before


@pytest.mark.parametrize("value", ["abc", "9" * 40])
def test_source_date_epoch(tmp_path, capsys, monkeypatch, value):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", value)
    src = _src(tmp_path)
    assert _run("build", str(src / "site.toml"), "-o", str(tmp_path / "site"), "--no-pdf", "--jobs", "1") == 0
    assert "SOURCE_DATE_EPOCH" in capsys.readouterr().err


def test_math_and_underscore_names_in_plots(tmp_path, capsys):
    names = [r"$\sqrt{\sqrt{x}}$", "a $5 and $6 ride", "_hidden"]
    src = _src(tmp_path, riders=_riders(names))
    shutil.copy(SAMPLES / "hill-loop.gpx", src / "riverside-loop.gpx")
    out = tmp_path / "site"
    assert _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1") == 0
    svg = (out / "riverside-loop" / "power.svg").read_text()
    assert "a $5 and $6 ride" in svg and "_hidden" in svg and r"\sqrt" in svg
    assert "Traceback" not in capsys.readouterr().err


def test_control_characters_are_not_written_raw(tmp_path, capsys):
    """An escape sequence in a name is refused (naming the character by its code, so
    the message prints none of it); a direction override is kept but never written
    raw to the terminal."""
    src = _src(tmp_path, riders=_riders(["Rider \x1b[31mRED\x1b[0m"]))
    assert _run("check", str(src / "site.toml")) == 1
    err = capsys.readouterr().err
    assert "\x1b" not in err and "U+001B" in err
    (tmp_path / "rtl").mkdir()
    src = _src(tmp_path / "rtl", riders=_riders(["Rider RED \u202eevil"]))
    assert _run("check", str(src / "site.toml")) == 0
    out = capsys.readouterr().out
    assert "\u202e" not in out and "RED" in out


def test_too_weak_rider(tmp_path, capsys):
    weak = ("--power", "1", "--cp", "10")  # the lowest CP the limits allow, riding at 1 W
    assert _run("route", str(SAMPLES / "hill-loop.gpx"), *weak, "--json") == 0
    data = json.loads(capsys.readouterr().out)  # valid JSON: no Infinity
    assert data["totals"]["time_s"] is None
    assert _run("route", str(SAMPLES / "hill-loop.gpx"), *weak) == 0
    assert "cannot complete the route" in capsys.readouterr().out
    # 1 W alone implies a CP below the limits: one clear line, exit 1
    _one_line_error(
        capsys, _run("route", str(SAMPLES / "hill-loop.gpx"), "--power", "1"), "critical power", "--cp"
    )
    riders = '[[riders]]\nname = "Weak"\nvehicle = "road-hoods"\ncp_w = 10\nflat_w = 1\n'
    src = _src(tmp_path, riders=riders, event='date = "2027-04-18"\nstart = "08:00"\n')
    shutil.copy(SAMPLES / "hill-loop.gpx", src / "riverside-loop.gpx")
    out = tmp_path / "site"
    assert _run("build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1") == 0
    assert "cannot complete the route" in (out / "riverside-loop" / "plan.json").read_text()


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    folder = tmp_path_factory.mktemp("served")
    src = _src(folder)
    out = folder / "site"
    assert main(["build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1"]) == 0
    (out / "outside").symlink_to("/etc")
    (out / "passwd").symlink_to("/etc/passwd")
    with serving(str(out)) as url:
        yield url


def _status(url: str) -> int:
    try:
        with urllib.request.urlopen(url, timeout=10) as response:
            return response.status
    except urllib.error.HTTPError as exc:
        return exc.code


def test_serve_nul_byte(served):
    assert _status(served + "index.html%00") == 400


def test_serve_symlink_out(served):
    assert _status(served + "passwd") == 404
    assert _status(served + "outside/passwd") == 404
    assert _status(served + "index.html") == 200


def test_serve_disconnect(served):
    host, port = served.split("//")[1].rstrip("/").split(":")
    for _ in range(20):  # hang up mid-request, and mid-response
        with socket.create_connection((host, int(port)), timeout=5) as s:
            s.sendall(b"GET /index.html HTTP/1.1\r\nHost: x\r\n\r\n")
    assert _status(served + "index.html") == 200


def test_watch_unexpected_error_and_polls_times_only(tmp_path):
    path = tmp_path / "site.toml"
    path.write_text("a")
    loads, said = [], []
    stop = threading.Event()

    def load():
        loads.append(1)
        if len(loads) == 1:
            raise RuntimeError("something no one expected")
        return "config"

    thread = threading.Thread(
        target=watch,
        args=(load, lambda c: [path], lambda c: None, said.append, stop, [path], 0.05),
        daemon=True,
    )
    thread.start()

    def wait_for(condition) -> None:
        deadline = time.monotonic() + 20
        while not condition() and time.monotonic() < deadline:
            time.sleep(0.02)

    time.sleep(0.3)
    assert loads == []  # nothing changed: the configuration was not read again
    path.write_text("bb")
    wait_for(lambda: len(loads) == 1 and said)
    path.write_text("ccc")
    wait_for(lambda: "rebuilt" in said)
    time.sleep(0.2)
    stop.set()
    thread.join(5)
    assert len(loads) == 2  # once per change
    assert sum("something no one expected" in s for s in said) == 1
    assert "rebuilt" in said
    assert file_state([tmp_path / "missing"]) == ((str(tmp_path / "missing"), None, None),)


def test_check_10000_riders(tmp_path, capsys):
    riders = "".join(
        f'[[riders]]\nname = "R{i}"\nvehicle = "road-hoods"\ncp_w = {200 + i % 50}\n' for i in range(10000)
    )
    src = _src(tmp_path, riders=riders + "[[riders]]\nname = 'bad'\nvehicle = 'road-hoods'\ncp_w = 5000\n")
    _one_line_error(capsys, _run("check", str(src / "site.toml")), "line 40008")


def test_check_10000_riders_lines(tmp_path, capsys):
    assert "check-10000-riders-lines" in CASES
    riders = "".join(f'[[riders]]\nname = "Rider number {i}"\nvehicle = "road-hoods"\n' for i in range(10000))
    src = _src(tmp_path, riders=riders)
    assert _run("check", str(src / "site.toml")) == 0
    out = capsys.readouterr().out
    assert "10000 entrants, 10000 rides" in out and "9,988 more" in out
    assert max(len(line) for line in out.splitlines()) < 400


def test_serve_idle_connection(tmp_path, monkeypatch):
    from cardgen import serve

    monkeypatch.setattr(serve.SiteHandler, "timeout", 0.5)
    (tmp_path / "index.html").write_text("hi")
    server = serve.PreviewServer(("127.0.0.1", 0), tmp_path)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        with socket.create_connection(server.server_address[:2], timeout=5) as s:
            s.sendall(b"GET /index.html HTTP/1.1\r\nHost: x\r\n")  # never finished
            started = time.monotonic()
            assert s.recv(1024) == b""  # the server hung up
            assert time.monotonic() - started < 4
    finally:
        server.shutdown()
        server.server_close()


@contextlib.contextmanager
def _preview(tmp_path):
    from cardgen import serve

    (tmp_path / "index.html").write_text("hi")
    server = serve.PreviewServer(("127.0.0.1", 0), tmp_path)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield server.server_address[:2]
    finally:
        server.shutdown()
        server.server_close()


def test_serve_trickled_headers(tmp_path, monkeypatch):
    """One byte every 0.2 s never trips the per-read idle timeout (20 s); the bound on
    the whole header time (made 1 s here) cuts it off."""
    from cardgen import serve

    monkeypatch.setattr(serve, "HEADER_SECONDS", 1.0, raising=False)
    request = b"GET /index.html HTTP/1.1\r\nHost: x\r\nX-Slow: " + b"a" * 1000
    with _preview(tmp_path) as address, socket.create_connection(address, timeout=5) as s:
        started = time.monotonic()
        cut = False
        for byte in request[:40]:  # at most 8 s of trickling
            try:
                s.sendall(bytes([byte]))
            except OSError:
                cut = True
                break
            time.sleep(0.2)
            s.setblocking(False)
            try:
                cut = s.recv(1024) == b""
            except BlockingIOError:
                pass
            except OSError:
                cut = True
            s.setblocking(True)
            if cut:
                break
        assert cut and time.monotonic() - started < 4


def test_serve_slots_full(tmp_path):
    """40 connections that never finish their request take the 32 slots; a normal GET
    is still answered, at once, taking the slot of the longest waiter."""
    from cardgen import serve

    with _preview(tmp_path) as address, contextlib.ExitStack() as stack:
        for _ in range(serve.MAX_CONNECTIONS + 8):
            s = stack.enter_context(socket.create_connection(address, timeout=5))
            s.sendall(b"GET /index.html HTTP/1.1\r\nHost: x\r\n")  # never finished
        time.sleep(0.5)
        started = time.monotonic()
        url = f"http://{address[0]}:{address[1]}/index.html"
        with urllib.request.urlopen(url, timeout=5) as response:
            assert response.status == 200 and response.read() == b"hi"
        assert time.monotonic() - started < serve.SLOT_WAIT_SECONDS + 1


def test_rebuild_reuse_symlink(tmp_path):
    src = _src(tmp_path)
    shutil.copy(SAMPLES / "accessible-path.gpx", src)
    (src / "site.toml").write_text(
        (src / "site.toml").read_text() + '[[routes]]\ngpx = "accessible-path.gpx"\n'
    )
    out = tmp_path / "site"
    args = ("build", str(src / "site.toml"), "-o", str(out), "--no-pdf", "--jobs", "1")
    assert _run(*args) == 0
    (out / "riverside-loop" / "etc").symlink_to("/etc")
    before = snapshot(out / "accessible-path")
    shutil.copy(SAMPLES / "hill-loop.gpx", src / "accessible-path.gpx")  # change the other route only
    assert _run(*args) == 0
    link = out / "riverside-loop" / "etc"
    assert link.is_symlink()  # the unchanged route was reused, its link copied as a link
    assert not (out / "riverside-loop" / "passwd").exists()
    assert snapshot(out / "accessible-path") != before


def test_negative_zero(tmp_path, capsys):
    from gpxmaker import straight, to_latlon, write_gpx

    x, y, _ = straight(2000)
    lat, lon = to_latlon(x, y)
    path = write_gpx(tmp_path / "flat.gpx", lat, lon, [5.0] * len(lat))
    assert _run("route", str(path)) == 0
    out = capsys.readouterr().out
    assert "--" not in out.splitlines()[0] and "+0 m / -0 m" in out


def test_solve_implausible_speed(capsys):
    assert _run("solve", "--vehicle", "road-drops", "--power", "1000", "--grade", "-40") == 0
    assert "bicycles are not ridden above 100 km/h" in capsys.readouterr().out
