"""Food and fluid are per person: a tandem carries two people who each eat and drink by
the published guides, and a feed stocks for people, not vehicles.

The guides are per athlete: carbohydrate during exercise by the ride's duration,
Thomas, Erdman & Burke 2016, "Nutrition and Athletic Performance", joint position
statement, Med Sci Sports Exerc 48(3):543–568, Table 4 (1–2.5 h 30–60 g/h, longer
up to 90 g/h); fluid 0.4–0.8 L/h as a starting point, Sawka et al. 2007, ACSM
position stand "Exercise and Fluid Replacement", Med Sci Sports Exerc 39(2):377–390
(from memory). A tandem has two riders by what the word means."""

from __future__ import annotations

from datetime import datetime, timedelta
from pathlib import Path

import pytest

from cardgen.errors import VehicleError
from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.plan.day import STOCK_MARGIN, day_points
from cardgen.plan.event import checkpoint_windows
from cardgen.plan.fuel import legs
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles, vehicles_from_tables
from cardgen.route.checkpoints import Checkpoint
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
#: The top of the carbohydrate guide [g/h] for a ride of 1–2.5 h and the fluid guide
#: at 13 °C [L/h] (Thomas et al. 2016 Table 4; Sawka et al. 2007's 0.4–0.8 L/h split
#: by temperature, 0.4–0.6 below 15 °C: common practice, no published source).
CARBS_1_TO_2_5_H = (30.0, 60.0)
FLUID_13C = (0.4, 0.6)


@pytest.fixture(scope="module")
def hill_loop():
    track = read_gpx(SAMPLES / "hill-loop.gpx")
    analysis = analyse(track, build_terrain(track))
    vehicles = builtin_vehicles()
    return {
        name: make_plan(analysis, rider=Rider.for_vehicle(vehicles[name], flat_power=power))
        for name, power in (("tandem", 120.0), ("road-hoods", 80.0))
    }


def test_a_tandem_carries_two_people_and_a_solo_vehicle_one():
    vehicles = builtin_vehicles()
    assert vehicles["tandem"].riders == 2
    assert all(v.riders == 1 for name, v in vehicles.items() if name != "tandem")


@pytest.mark.parametrize("bad", [0, 5, 1.5, True, "two"])
def test_a_rider_count_out_of_range_is_refused_naming_the_key(bad):
    with pytest.raises(VehicleError, match="'riders' must be a whole number from 1 to 4"):
        vehicles_from_tables({"quad": {"base": "tandem", "riders": bad}}, "my.toml", "user file")


def test_each_tandem_rider_gets_the_published_band_and_the_feed_stocks_both(hill_loop):
    """The tandem's leg guide is one person's band × the leg's hours (each of the two
    eats by it), and a feed at 5 km stocks the top of it twice for the tandem, once for
    the solo rider, plus the margin: summed by hand from the legs' riding times."""
    feed = Checkpoint("Feed", 5000.0, kind="feed")
    plans = [hill_loop["tandem"], hill_loop["road-hoods"]]
    start = datetime(2027, 4, 18, 9, 0)
    for plan in plans:  # the ride is 1–2.5 h with its stops: the 30–60 g/h band
        assert 1.0 < plan.finish_elapsed / 3600 <= 2.5
    carbs_top = fluid_top = 0.0
    for plan, people in zip(plans, (2, 1), strict=True):
        after = legs(plan, [(feed.distance, feed.name)], 13.0)[1]  # from the feed to the finish
        hours = after.time / 3600
        assert after.people == people
        assert after.carbs == pytest.approx((CARBS_1_TO_2_5_H[0] * hours, CARBS_1_TO_2_5_H[1] * hours))
        assert after.fluid == pytest.approx((FLUID_13C[0] * hours, FLUID_13C[1] * hours))
        carbs_top += people * CARBS_1_TO_2_5_H[1] * hours
        fluid_top += people * FLUID_13C[1] * hours
    windows, _ = checkpoint_windows(plans, [feed], [start, start + timedelta(minutes=1)], 600.0)
    (row,) = day_points(plans, [start, start + timedelta(minutes=1)], windows, 13.0)
    assert (row.riders, row.people) == (2, 3)
    assert row.carbs_g == pytest.approx(carbs_top * (1 + STOCK_MARGIN), rel=1e-6)
    assert row.fluid_l == pytest.approx(fluid_top * (1 + STOCK_MARGIN), rel=1e-6)
