"""Food and fluids per leg (cardgen.plan.fuel), against the published guides it cites:
Thomas, Erdman & Burke (2016), Med Sci Sports Exerc 48(3):543–568, Table 4
(carbohydrate during exercise), and Sawka et al. (2007), Med Sci Sports Exerc
39(2):377–390 (fluid replacement)."""

from __future__ import annotations

from pathlib import Path

import pytest

from cardgen.io.gpx import read_gpx
from cardgen.plan import analyse, make_plan
from cardgen.plan.fuel import carb_rate, fluid_rate, legs
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


@pytest.mark.parametrize(
    "hours, rate",
    [(0.5, (0, 0)), (1.0, (0, 30)), (2.0, (30, 60)), (2.5, (30, 60)), (4.0, (60, 90))],
)
def test_carbohydrate_follows_the_position_statement_by_ride_length(hours, rate):
    """Under ~45 min none; 45–75 min small amounts; 1–2.5 h 30–60 g/h; longer up to
    90 g/h (Thomas et al. 2016, Table 4)."""
    assert carb_rate(hours) == rate


def test_fluid_stays_inside_the_published_starting_range_and_rises_with_heat():
    """0.4–0.8 L/h starting point (Sawka et al. 2007, from memory); cardgen's split by
    temperature is its own (common practice, no published source)."""
    rates = [fluid_rate(t) for t in (-5.0, 10.0, 20.0, 30.0, 45.0)]
    assert all(0.4 <= low <= high <= 0.8 for low, high in rates)
    assert [r[0] for r in rates] == sorted(r[0] for r in rates)
    assert fluid_rate(None) == fluid_rate(20.0)


def test_legs_add_up_to_the_whole_ride():
    track = read_gpx(SAMPLES / "day-ride.gpx")
    analysis = analyse(track, build_terrain(track))
    plan = make_plan(
        analysis, rider=Rider.for_vehicle(builtin_vehicles()["road-hoods"]), stops=((28100.0, 1800.0),)
    )
    feeds = [(12100.0, "A"), (28100.0, "B"), (58500.0, "C")]
    got = legs(plan, feeds, 13.0)
    assert [leg.to for leg in got] == ["A", "B", "C", "Finish"]
    assert sum(leg.time for leg in got) == pytest.approx(plan.totals.time, rel=1e-9)  # riding only, no stops
    assert sum(leg.food_energy for leg in got) == pytest.approx(plan.totals.food_energy, rel=1e-6)
    low, high = carb_rate(plan.finish_elapsed / 3600)
    for leg in got:
        assert leg.carbs == pytest.approx((low * leg.time / 3600, high * leg.time / 3600))
        assert leg.fluid == pytest.approx((0.4 * leg.time / 3600, 0.6 * leg.time / 3600))
