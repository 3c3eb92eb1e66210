"""Small things an organiser meets: windows that hold the stops, stops for the GPX's
own checkpoints, duplicate names and bibs named by their CSV rows, a semicolon CSV,
file names that keep Ł and Ø, the energy line, and the 2-up pack's flip edge."""

from __future__ import annotations

import shutil
from datetime import datetime, timedelta
from pathlib import Path

import pytest

from cardgen.config import load_config
from cardgen.errors import ConfigError
from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, checkpoint_windows, make_plan
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.render.html import slugify
from cardgen.route.checkpoints import Checkpoint, resolve_checkpoints, resolve_points
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


@pytest.fixture(scope="module")
def day_ride():
    track = read_gpx(SAMPLES / "day-ride.gpx")
    return track, analyse(track, build_terrain(track))


@pytest.mark.parametrize("speeds", [None, (12 / 3.6, 30 / 3.6)])
def test_a_window_stays_open_until_the_last_riders_stop_there_ends(day_ride, speeds):
    """A 40-min stop at 60 km: the checkpoint closes no earlier than the end of the
    last rider's stop (plus the margin by the riders' rule). By the speed rule (12 km/h
    from 07:00: 12:00) a handcyclist slower than 12 km/h on average is still there."""
    track, analysis = day_ride
    stop = 40 * 60.0
    checkpoint = Checkpoint("Feed", 60_000.0, stop)
    slow = Rider.for_vehicle(builtin_vehicles()["handcycle"], name="Slow")
    plans = [make_plan(analysis, rider=slow, stops=((60_000.0, stop),))]
    start = datetime(2027, 4, 18, 7, 0)
    arrival = start + timedelta(seconds=plans[0].elapsed_at(60_000.0))
    (window,), _ = checkpoint_windows(plans, [checkpoint], [start], 5 * 60.0, speeds)
    assert window.opens <= arrival
    assert window.closes >= arrival + timedelta(seconds=stop) + (
        timedelta(minutes=5) if speeds is None else timedelta()
    )


def test_stops_min_applies_to_the_gpx_checkpoints_in_route_order(day_ride):
    track, analysis = day_ride
    found = resolve_checkpoints(
        (), track, analysis.terrain, "day-ride.gpx", stops=(600.0, 1800.0, 600.0, 600.0)
    )
    assert [c.stop for c in found] == [600.0, 1800.0, 600.0, 600.0]
    assert [c.name for c in found][:2] == ["Checkpoint 1: Brenquist Cross", "Checkpoint 2: Ossivel Hall"]
    with pytest.raises(ConfigError, match="stops_min has 2 entries but the GPX file marks 4 checkpoints"):
        resolve_checkpoints((), track, analysis.terrain, "day-ride.gpx", stops=(600.0, 60.0))


def test_feed_and_marshal_points_are_placed_by_waypoint_name_or_km(day_ride):
    track, analysis = day_ride
    feeds = resolve_points([55_000.0, "Checkpoint 2: Ossivel Hall"], track, analysis.terrain, "d.gpx", "feed")
    (hall,) = [c for c in resolve_checkpoints((), track, analysis.terrain, "d.gpx") if "Ossivel" in c.name]
    assert [(c.name, c.kind, c.stop) for c in feeds] == [
        ("Checkpoint 2: Ossivel Hall", "feed", 0.0),
        ("Feed at 55 km", "feed", 0.0),
    ]
    assert feeds[0].distance == hall.distance and feeds[1].distance == 55_000.0
    (marshal,) = resolve_points([12_500.0], track, analysis.terrain, "d.gpx", "marshal")
    assert (marshal.name, marshal.kind) == ("Marshal point at 12.5 km", "marshal")
    with pytest.raises(
        ConfigError, match=r"^d.gpx: feed point 'Checkpoint 2: Osivel Hall' is not a waypoint .*Ossivel"
    ):
        resolve_points(["Checkpoint 2: Osivel Hall"], track, analysis.terrain, "d.gpx", "feed")
    with pytest.raises(ConfigError, match=r"^d.gpx: marshal point at 120 km is beyond the route's 95.0 km$"):
        resolve_points([120_000.0], track, analysis.terrain, "d.gpx", "marshal")


def test_feeds_and_marshals_are_read_from_the_config(tmp_path):
    shutil.copy(SAMPLES / "day-ride.gpx", tmp_path)
    body = '[[routes]]\ngpx = "day-ride.gpx"\nfeeds = [55, "Checkpoint 2: Ossivel Hall"]\nmarshals = [12.5]\n'
    rider = '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n'
    (tmp_path / "site.toml").write_text(body + rider, encoding="utf-8")
    route = load_config(tmp_path / "site.toml").routes[0]
    assert route.feeds == (55_000.0, "Checkpoint 2: Ossivel Hall") and route.marshals == (12_500.0,)
    (tmp_path / "site.toml").write_text(body.replace("[12.5]", "[nan]") + rider, encoding="utf-8")
    with pytest.raises(ConfigError, match=r"routes\[0\]\.marshals.*nan is not a distance along the route"):
        load_config(tmp_path / "site.toml")


def test_stops_min_without_listed_checkpoints_is_accepted_by_the_config(tmp_path):
    shutil.copy(SAMPLES / "day-ride.gpx", tmp_path)
    (tmp_path / "site.toml").write_text(
        '[[routes]]\ngpx = "day-ride.gpx"\nstops_min = [10, 30, 10, 10]\n'
        '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n',
        encoding="utf-8",
    )
    assert load_config(tmp_path / "site.toml").routes[0].stops == (600.0, 1800.0, 600.0, 600.0)


def _csv_site(tmp_path, rows: str):
    shutil.copy(SAMPLES / "riverside-loop.gpx", tmp_path)
    (tmp_path / "entrants.csv").write_text(rows, encoding="utf-8")
    (tmp_path / "site.toml").write_text('riders = "entrants.csv"\n[[routes]]\ngpx = "riverside-loop.gpx"\n')
    with pytest.raises(ConfigError) as caught:
        load_config(tmp_path / "site.toml")
    return str(caught.value)


def test_duplicate_names_and_bibs_point_at_their_csv_rows(tmp_path):
    message = _csv_site(
        tmp_path,
        "name,vehicle,bib\nAda,road-hoods,7\nBea,road-hoods,8\nAda,handcycle,9\nCy,tandem,8\n",
    )
    # one spreadsheet: its name once, then the rows (it was named before each row)
    assert "entrants.csv:rows 2, 4, column name: two riders are named 'Ada'; give each" in message
    assert "entrants.csv:rows 3, 5, column bib: bib 8 is given to two riders; give each" in message
    assert "site.toml: two riders" not in message and message.count("entrants.csv") == 2


def test_a_bib_given_to_three_riders_says_three(tmp_path):
    """It said "two riders" whatever the count (a 300-rider trial's copy-paste slip)."""
    message = _csv_site(tmp_path, "name,vehicle,bib\nAda,road-hoods,7\nBea,road-hoods,7\nCy,tandem,7\n")
    assert message.endswith(
        "entrants.csv:rows 2, 3, 4, column bib: bib 7 is given to three riders; give each a different bib"
    )


def test_a_semicolon_separated_csv_gets_a_hint(tmp_path):
    message = _csv_site(tmp_path, "name;vehicle;bib\nAda;road-hoods;7\n")
    assert "separated by semicolons" in message and "unknown column" not in message


@pytest.mark.parametrize(
    "name, slug",
    [
        ("Łukasz Wróbel", "lukasz-wrobel"),  # Ł has no decomposition: spelt L
        ("Søren Ødegård", "soren-odegard"),
        ("Großglockner Ægir", "grossglockner-aegir"),
        ("Đorđe Þórsson", "dorde-thorsson"),
    ],
)
def test_file_names_spell_out_letters_without_a_decomposition(name, slug):
    assert slugify(name) == slug


def test_the_card_calls_the_energy_spent_and_the_cover_names_the_flip_edge():
    card = (Path(__file__).resolve().parents[1] / "templates" / "card.html").read_text()
    cover = (Path(__file__).resolve().parents[1] / "templates" / "cover.html").read_text()
    assert "energy spent riding about" in card and "food about" not in card
    # the food table's kcal column is energy spent too, not what to eat
    assert ">Energy spent</th>" in card and ">Food</th>" not in card
    assert "flip on short edge" in cover
