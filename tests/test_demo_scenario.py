"""The demo's invented scenario: an event where each entrant rides one route.

A new organiser read the old demo's index (rider counts adding to 25 for 9 entrants)
and its feed stock (the same person counted on several routes) as a bug: every
entrant was on all four routes at once. The demo still shows what cardgen does: every
vehicle kind it had, e-assist riders, a start wave across routes, checkpoints with
planned stops (which the day sheet stocks as feeds) and a short outing.
"""

from cardgen.cli.check import _entrants_and_rides
from cardgen.config import load_config
from cardgen.paths import demo_site


def _rides(config):
    return {
        r.rider.name: [rc.gpx.stem for rc in config.routes if r.rides(rc, rc.name or rc.gpx.stem)]
        for r in config.riders
    }


def test_each_entrant_of_the_demo_rides_one_route():
    config = load_config(demo_site())
    rides = _rides(config)
    assert len(rides) == len(config.riders)  # names are unique
    assert all(len(routes) == 1 for routes in rides.values()), rides
    assert _entrants_and_rides(config) == f"{len(config.riders)} entrants, {len(config.riders)} rides"


def test_every_route_of_the_demo_has_riders():
    config = load_config(demo_site())
    ridden = {stem for routes in _rides(config).values() for stem in routes}
    assert ridden == {rc.gpx.stem for rc in config.routes}


def test_the_demo_still_shows_every_kind_of_rider_and_the_event_tools():
    config = load_config(demo_site())
    vehicles = {r.rider.vehicle.name for r in config.riders}
    assert {
        "road-hoods",
        "city-upright",
        "handcycle",
        "tandem",
        "trike-recumbent",
        "e-assist-cargo",
        "e-assist-city",
    } <= vehicles
    # a wave whose riders ride different routes: one start line
    (wave,) = config.waves
    by_name = _rides(config)
    assert len({by_name[name][0] for name in wave.riders}) > 1
    # checkpoints with planned stops (the day sheet's food), and a short outing
    assert any(rc.checkpoints and (rc.stops or rc.stop) for rc in config.routes)
    assert any(rc.gpx.stem == "riverside-loop" for rc in config.routes)


def test_check_counts_entrants_and_rides_apart(tmp_path):
    """An entrant on several routes is a ride on each: check says so."""
    text = demo_site().read_text(encoding="utf-8").replace('routes = ["day-ride"]\n', "", 1)
    (tmp_path / "site.toml").write_text(text, encoding="utf-8")
    for f in demo_site().parent.iterdir():
        if f.suffix in (".gpx", ".csv"):
            (tmp_path / f.name).write_bytes(f.read_bytes())
    config = load_config(tmp_path / "site.toml")
    n = len(config.riders)
    assert _entrants_and_rides(config).startswith(
        f"{n} entrants, {n + len(config.routes) - 1} rides (1 entrant on more"
    )
