"""One mistake in site.toml is one message, at the key that holds it, with figures
rounded as the cards print them (a new organiser's trial: a misspelt GPX path gave
four more "no route" errors, a flat_kmh too fast for the CP was reported against
the rider's name in watts to three decimals, and a wave naming a rider whose own
entry was wrong got an error of its own)."""

import re

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.config import load_config
from cardgen.errors import ConfigError

SITE = """[site]
title = "One mistake"

[[waves]]
name = "Early"
start = "08:00"
riders = ["Ada, handcycle", "Bo, road bike"]

[[routes]]
gpx = "flat.gpx"

[[routes]]
gpx = "hill.gpx"

[[riders]]
name = "Bo, road bike"
vehicle = "road-hoods"
cp_w = 230
flat_w = 160
routes = ["hill"]

[[riders]]
name = "Cy, city bike"
vehicle = "city-upright"
cp_w = 150
flat_w = 100
routes = ["flat", "hill"]

[[riders]]
name = "Ada, handcycle"
vehicle = "handcycle"
cp_w = 90
routes = ["flat"]
"""


def _problems(tmp_path, old: str, new: str) -> list[str]:
    distance = np.arange(0.0, 2000.0, 10.0)
    profile_gpx(tmp_path / "flat.gpx", distance, np.full_like(distance, 50.0))
    profile_gpx(tmp_path / "hill.gpx", distance, 50.0 + 0.05 * distance)
    assert old in SITE
    (tmp_path / "site.toml").write_text(SITE.replace(old, new, 1), encoding="utf-8")
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    return _listed(str(caught.value))


def _listed(message: str) -> list[str]:
    """The problems of a ConfigError: one on its own line, several after a count."""
    lines = message.splitlines()
    return [lines[0]] if len(lines) == 1 else [line.strip() for line in lines[1:]]


def _line_of(tmp_path, needle: str) -> int:
    lines = (tmp_path / "site.toml").read_text(encoding="utf-8").splitlines()
    return next(n for n, line in enumerate(lines, 1) if needle in line)


def test_a_misspelt_gpx_path_is_one_message(tmp_path):
    problems = _problems(tmp_path, 'gpx = "hill.gpx"', 'gpx = "hil.gpx"')
    assert len(problems) == 1, problems
    assert "routes[1].gpx" in problems[0] and "hil.gpx" in problems[0]
    assert "(did you mean 'hill.gpx'" in problems[0]  # the closest file beside it first


def test_a_rider_naming_a_route_that_does_not_exist_is_still_reported(tmp_path):
    problems = _problems(tmp_path, 'routes = ["flat", "hill"]', 'routes = ["flta"]')
    assert len(problems) == 1 and "no route 'flta'" in problems[0], problems


def test_a_flat_speed_too_fast_for_the_cp_is_reported_at_flat_kmh_in_printed_watts(tmp_path):
    problems = _problems(tmp_path, "cp_w = 150\nflat_w = 100", "cp_w = 150\nflat_kmh = 40")
    assert len(problems) == 1, problems
    line = _line_of(tmp_path, "flat_kmh = 40")
    assert f"line {line}: riders[1].flat_kmh" in problems[0]
    watts = re.search(r"takes about (\S+) W", problems[0]).group(1)
    assert watts.isdigit() and int(watts) % 5 == 0 and int(watts) > 150  # 5 W steps, as render.format.power
    assert "cp_w" in problems[0]


def test_a_flat_power_above_the_cp_is_reported_at_flat_w(tmp_path):
    problems = _problems(tmp_path, "cp_w = 150\nflat_w = 100", "cp_w = 150\nflat_w = 180")
    assert len(problems) == 1, problems
    assert f"line {_line_of(tmp_path, 'flat_w = 180')}: riders[1].flat_w" in problems[0]


def test_a_wave_naming_a_rider_with_a_broken_entry_adds_no_error(tmp_path):
    # Ada is in the Early wave; her vehicle is misspelt: one message, at vehicle
    problems = _problems(tmp_path, 'vehicle = "handcycle"', 'vehicle = "handcyle"')
    assert len(problems) == 1 and "riders[2].vehicle" in problems[0], problems


def test_a_wave_naming_an_unknown_rider_is_still_reported(tmp_path):
    problems = _problems(tmp_path, '["Ada, handcycle", "Bo', '["Ada, handcyle", "Bo')
    assert len(problems) == 1 and "waves[0].riders" in problems[0], problems


def test_a_misspelt_gpx_path_offers_only_close_names(tmp_path):
    """Beside the demo's four routes, "hill-lop.gpx" is "hill-loop.gpx" misspelt;
    "riverside-loop.gpx" was offered too, only because the names share ".gpx"
    (difflib's ratio 0.6, the general cutoff)."""
    distance = np.arange(0.0, 2000.0, 10.0)
    for name in ("riverside-loop", "hill-loop", "day-ride", "accessible-path"):
        profile_gpx(tmp_path / f"{name}.gpx", distance, np.full_like(distance, 50.0))
    (tmp_path / "site.toml").write_text('[[routes]]\ngpx = "hill-lop.gpx"\n', encoding="utf-8")
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    message = str(caught.value)
    assert "(did you mean 'hill-loop.gpx'?)" in message
    assert "riverside-loop" not in message and "day-ride" not in message


@pytest.mark.parametrize(
    "entrants",
    [
        "name;vehicle;cp_w\nBo, road bike;road-hoods;230\nAda, handcycle;handcycle;90\n",  # semicolons
        None,  # the file is missing
        "nom,vehicle,cp_w\n",  # a header that is not the [[riders]] keys
    ],
)
def test_an_unreadable_entrants_file_is_one_message_though_a_wave_names_its_riders(tmp_path, entrants):
    """A semicolon-separated CSV (a spreadsheet saved in a comma-decimal language) whose
    riders a wave names: one message, at the CSV. Tried with a 300-rider event whose
    adaptive wave names 42 riders: the semicolon hint came with 42 "no rider" errors."""
    site = SITE.split("[[riders]]")[0] + '[[riders]]\ncsv = "entrants.csv"\n'
    distance = np.arange(0.0, 2000.0, 10.0)
    profile_gpx(tmp_path / "flat.gpx", distance, np.full_like(distance, 50.0))
    profile_gpx(tmp_path / "hill.gpx", distance, 50.0 + 0.05 * distance)
    (tmp_path / "site.toml").write_text(site, encoding="utf-8")
    if entrants is not None:
        (tmp_path / "entrants.csv").write_text(entrants, encoding="utf-8")
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    problems = _listed(str(caught.value))
    assert len(problems) == 1 and "entrants.csv" in problems[0], problems
    assert "waves[0]" not in str(caught.value)


def test_one_mistake_is_one_line(tmp_path, capsys):
    """A typo is one line on stderr, the place first (it was two: "1 problem in the
    configuration:" and the problem under it)."""
    from cardgen.cli import main

    _problems(tmp_path, 'start = "08:00"', 'start = "8:0O"')
    assert main(["check", str(tmp_path / "site.toml")]) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith(f"cardgen: error: {tmp_path / 'site.toml'}, line "), err
    assert "waves[0].start" in err[0]


def test_a_wave_naming_an_unknown_route_lists_the_routes(tmp_path):
    """A wave written with the name the pages show (the GPX track's, "Hill climb"),
    where only the [[routes]] name or the file name counts: the message said "no route
    'Hill climb'" and nothing more; a rider's did list the routes."""
    problems = _problems(tmp_path, 'riders = ["Ada, handcycle", "Bo, road bike"]', 'routes = ["Hill climb"]')
    assert len(problems) == 1 and "waves[0].routes no route 'Hill climb'" in problems[0], problems
    assert problems[0].endswith("; the routes are flat, flat.gpx, hill, hill.gpx"), problems


def test_routes_separated_by_commas_in_a_csv_cell_get_the_separator(tmp_path):
    """A spreadsheet cell "lakes-160,lakes-40" (quoted, so one cell): the message
    offered the closest single route ("did you mean 'lakes-160'"), not the fix."""
    site = 'riders = "e.csv"\n' + SITE.split("[[riders]]")[0].replace(
        'riders = ["Ada, handcycle", "Bo, road bike"]', 'routes = ["flat"]'
    )
    distance = np.arange(0.0, 2000.0, 10.0)
    profile_gpx(tmp_path / "flat.gpx", distance, np.full_like(distance, 50.0))
    profile_gpx(tmp_path / "hill.gpx", distance, 50.0 + 0.05 * distance)
    (tmp_path / "site.toml").write_text(site, encoding="utf-8")
    (tmp_path / "e.csv").write_text(
        'name,vehicle,cp_w,routes\nBo,road-hoods,230,"flat,hill"\n', encoding="utf-8"
    )
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    assert str(caught.value).endswith(
        "e.csv:row 2, column routes: no route 'flat,hill'; separate routes with ';', not ','"
    )


@pytest.mark.parametrize("value", ["", ".", "routes"])
def test_riders_naming_a_folder_says_where(tmp_path, value):
    """riders = "" read "/path/to/event: not a regular file; give the path of a
    entrants (CSV) file": neither site.toml nor the key (found by the config fuzz
    once a single problem lost its "1 problem in the configuration" line)."""
    (tmp_path / "routes").mkdir()
    profile_gpx(tmp_path / "flat.gpx", np.arange(0.0, 2000.0, 10.0), np.full(200, 50.0))
    (tmp_path / "site.toml").write_text(
        f'riders = "{value}"\n[[routes]]\ngpx = "flat.gpx"\n', encoding="utf-8"
    )
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    assert str(caught.value) == (
        f"{tmp_path / 'site.toml'}: riders = {value!r} is a folder; give the entrants' CSV file, like \"entrants.csv\""
    )
