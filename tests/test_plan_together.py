"""Riders planned together (plan.together) get, bit for bit, the plans each gets alone.

The reference is the per-rider path, one rider after another (make_plan), with the
shared block-time grids and the programme cache emptied before each way, so that
neither borrows the other's work; the batched way is plan_together, as the build
plans a route's riders (plan.route_plans.plan_route)."""

from __future__ import annotations

import dataclasses
import functools

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.io.gpx import read_gpx
from cardgen.physics.effort import w_prime_balance
from cardgen.plan import analyse, make_plan, pacing, together
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain


def _analysis(tmp_path):
    """30 km of rolling hills with three steep climbs (invented): W′ binds for some
    riders and not for others."""
    d = np.arange(0, 30_000 + 1, 10.0)
    e = 30 * np.sin(2 * np.pi * d / 4000) + 12 * np.sin(2 * np.pi * d / 1300)
    for start in (6000.0, 15000.0, 24000.0):  # 1.2 km at about 9 %
        e += np.clip((d - start) / 1200.0, 0.0, 1.0) * 110.0
    track = read_gpx(profile_gpx(tmp_path / "together.gpx", d, e))
    return analyse(track, build_terrain(track))


def _riders():
    lib = builtin_vehicles()
    heavy = dataclasses.replace(lib["city-upright"], rider_mass=105.0)
    small_battery = dataclasses.replace(lib["e-assist-city"], battery=20 * 3600.0)
    return [
        # strong road rider, little W′ for their CP: W′ runs out on the climbs
        Rider.for_vehicle(lib["road-hoods"], cp=280.0, w_prime=6000.0),
        # large W′ for a low mean power: W′ never binds
        Rider.for_vehicle(lib["road-drops"], cp=300.0, w_prime=40000.0, flat_power=120.0),
        Rider.for_vehicle(heavy, cp=150.0, w_prime=9000.0),
        Rider.for_vehicle(lib["handcycle"], cp=105.0, w_prime=7000.0),
        Rider.for_vehicle(lib["tandem"], cp=330.0, w_prime=20000.0),
        # e-assist with a battery too small for the levels asked: assist choice and cut
        Rider.for_vehicle(small_battery, cp=140.0, w_prime=9000.0),
        Rider.for_vehicle(lib["road-hoods"], cp=210.0, w_prime=14000.0, pacing="steady"),
    ]


def _fresh() -> None:
    pacing._grids.clear()
    pacing._last.__dict__.clear()


def _fields(plan):
    ride = plan.ride
    return (ride.rider_power, ride.time, ride.motor_power, ride.elapsed)


@pytest.mark.parametrize("width", [3, together.WIDTH])
def test_riders_planned_together_get_the_plans_they_get_alone(tmp_path, width):
    analysis = _analysis(tmp_path)
    riders = _riders()
    _fresh()
    alone = [make_plan(analysis, rider=rider) for rider in riders]
    _fresh()
    asked = []
    original = together.solve_together

    def counting(requests):
        asked.append(len(requests))
        return original(requests)

    together.solve_together = counting
    try:
        both = together.plan_together(
            [functools.partial(make_plan, analysis, rider=r) for r in riders], width
        )
    finally:
        together.solve_together = original
    # the group is what the test claims: some programmes were solved together, one
    # rider's W′ runs out (the programme binds) and another's never does
    assert max(asked) >= 2
    lows = [
        float(np.min(w_prime_balance(p.ride.rider_power, p.ride.time, r.cp, r.w_prime))) / r.w_prime
        for p, r in zip(alone, riders, strict=True)
    ]
    assert lows[0] < 0.05 and lows[1] > 0.5
    assert alone[5].effort.assist_off_at is not None or alone[5].effort.battery_empty_at is not None
    for a, b in zip(alone, both, strict=True):
        for x, y in zip(_fields(a), _fields(b), strict=True):
            assert np.array_equal(np.asarray(x), np.asarray(y), equal_nan=True)
        assert a.effort == b.effort


def test_an_error_in_one_rider_is_raised_after_the_group_and_the_others_still_end(tmp_path):
    analysis = _analysis(tmp_path)
    rider = _riders()[0]
    ended = []

    def good():
        plan = make_plan(analysis, rider=rider)
        ended.append(True)
        return plan

    def bad():
        raise ValueError("broken rider")

    with pytest.raises(ValueError, match="broken rider"):
        together.plan_together([good, bad, good])
    assert len(ended) == 2
