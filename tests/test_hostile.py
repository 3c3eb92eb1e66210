"""Every case of the hostile corpus (tests/hostile/make_corpus.py) has its outcome."""

import json
import math
import runpy
from pathlib import Path

import pytest

from cardgen.cli import main

CORPUS = runpy.run_path(str(Path(__file__).parent / "hostile" / "make_corpus.py"))
CASES = CORPUS["CASES"]


def _no_nan(value):
    raise AssertionError(f"{value} in the JSON output")


def _finite_numbers(data):
    if isinstance(data, dict):
        for v in data.values():
            yield from _finite_numbers(v)
    elif isinstance(data, list):
        for v in data:
            yield from _finite_numbers(v)
    elif isinstance(data, float | int) and not isinstance(data, bool):
        yield data


@pytest.mark.parametrize("name", [n for n, c in CASES.items() if c[1][0] == "error"])
def test_hostile_file_is_refused_in_a_real_process(tmp_path, run_cli, name):
    path = CORPUS["write_case"](name, tmp_path)
    code, out, err = run_cli("route", str(path), "--json")
    assert code == 1, (out, err)
    assert CASES[name][1][1] in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    assert str(path) in err
    assert "root:x" not in out + err  # /etc/passwd never came through


@pytest.mark.parametrize("name", [n for n, c in CASES.items() if c[1][0] == "ok"])
def test_hostile_file_is_analysed_with_its_warning(tmp_path, capsys, name):
    path = CORPUS["write_case"](name, tmp_path)
    assert main(["route", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out, parse_constant=_no_nan)
    assert all(math.isfinite(x) for x in _finite_numbers(data))
    assert data["totals"]["time_s"] > 0
    assert main(["route", str(path)]) == 0
    human = capsys.readouterr().out
    assert CASES[name][1][1] in human


def test_readme_table_is_the_corpus():
    readme = (Path(__file__).parent / "hostile" / "README.md").read_text(encoding="utf-8")
    assert CORPUS["readme_table"]() in readme


#: Cases whose expected text is a note on the route itself (not on a climb or a name).
ROUTE_NOTES = (
    "partial-elevation",
    "elevation-100km",
    "time-backwards",
    "several-tracks",
    "segments-500km-apart",
    "gap-with-elevation-jump",
)


@pytest.mark.parametrize("name", ROUTE_NOTES)
def test_route_json_carries_the_notes_the_text_prints(tmp_path, capsys, name):
    """A script reading `route --json` learns the route is suspect, as a reader of the
    text does; a gap joined across an elevation jump never makes a climb."""
    path = CORPUS["write_case"](name, tmp_path)
    assert main(["route", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert any(CASES[name][1][1] in note["text"] for note in data["notes"]), data["notes"]
    if name == "gap-with-elevation-jump":
        assert data["climbs"] == []
