"""A folder of GPX files built without site.toml is titled from the routes' own
names (``<metadata>``/``<trk>`` name), not after the folder."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from gpxmaker import straight, to_latlon, write_gpx

from cardgen.config import folder_config
from cardgen.config.defaults import TITLE_CHARS, gpx_config, routes_title

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


def _route(path: Path, name: str) -> Path:
    x, y, _ = straight(2_000.0)
    lat, lon = to_latlon(x, y)
    return write_gpx(path, lat, lon, [20.0] * len(x), name=name)


def test_one_route_is_titled_by_its_name(tmp_path):
    shutil.copy(SAMPLES / "hill-loop.gpx", tmp_path)
    assert folder_config(tmp_path).title == "Pellowind Bank Hill Loop"
    assert gpx_config(tmp_path / "hill-loop.gpx").title == "Pellowind Bank Hill Loop"


def test_routes_with_unrelated_names_are_listed(tmp_path):
    for name in ("riverside-loop", "hill-loop"):
        shutil.copy(SAMPLES / f"{name}.gpx", tmp_path)
    # files in name order: hill-loop, riverside-loop
    assert folder_config(tmp_path).title == "Pellowind Bank Hill Loop and Riverside Loop"


def test_routes_sharing_their_first_words_are_titled_by_them(tmp_path):
    for km in (40, 100, 160):
        _route(tmp_path / f"r{km:03d}.gpx", f"Quorrel Vale Sportive – {km} km")
    assert folder_config(tmp_path).title == "Quorrel Vale Sportive: 40 km, 100 km and 160 km"


def test_a_file_without_a_name_lends_its_file_name_and_none_named_keeps_the_folder(tmp_path):
    _route(tmp_path / "east-loop.gpx", "Marsh Road Loop")
    _route(tmp_path / "west-loop.gpx", "")
    assert folder_config(tmp_path).title == "Marsh Road Loop and west-loop"
    (tmp_path / "east-loop.gpx").unlink()
    _route(tmp_path / "north-loop.gpx", "")
    assert folder_config(tmp_path).title == f"Routes in {tmp_path.name}"


def test_an_unreadable_file_leaves_the_title_to_the_others(tmp_path):
    _route(tmp_path / "a.gpx", "Marsh Road Loop")
    (tmp_path / "b.gpx").write_text("<gpx", encoding="utf-8")  # the build names it; no error here
    assert folder_config(tmp_path).title == "Marsh Road Loop and b"


def test_names_are_one_line_without_control_characters(tmp_path):
    _route(tmp_path / "a.gpx", "Marsh\tRoad\n  Loop\r")  # XML allows no other control characters
    assert folder_config(tmp_path).title == "Marsh Road Loop"


@pytest.mark.parametrize(
    "names, title",
    [
        (["Lone Ride"], "Lone Ride"),
        (["Lone Ride", "Lone Ride"], "Lone Ride"),  # two files, one name
        (["The Hill Loop", "The River Path"], "The Hill Loop and The River Path"),  # "The" is no title
        (
            [f"Pennwick Trail stage {i} along the old canal" for i in range(1, 9)],
            "Pennwick Trail stage: 8 routes",
        ),
        ([f"Route number {i} of a very long list of routes" for i in range(12)], None),
        (["x" * 200], None),
    ],
)
def test_titles_stay_short(names, title):
    made = routes_title(names)
    assert len(made) <= TITLE_CHARS
    if title is not None:
        assert made == title
