"""E-assist envelopes, motor power and the level suggestion."""

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.errors import VehicleError
from cardgen.physics.assist import builtin_motors, find_motor, motor_power, taper_factor
from cardgen.physics.steady import speed_for_power
from cardgen.plan import Conditions, _segment_air, make_plan, suggest_levels
from cardgen.route.climbs import find_climbs
from cardgen.route.gpx import read_gpx
from cardgen.route.terrain import build_terrain
from cardgen.vehicles import Rider, builtin_vehicles

MPH = 1609.344 / 3600


def test_presets_follow_the_published_envelopes():
    m = builtin_motors()
    # Regulation (EU) No 168/2013 Art. 2(2)(h): ≤ 250 W continuous, cut off before 25 km/h.
    assert m["eu-pedelec"].rated_power <= 250
    assert m["eu-pedelec"].cutoff_speed == pytest.approx(25 / 3.6)
    # 15 U.S.C. § 2085(b) / Cal. Veh. Code § 312.5: 750 W; classes 1 and 2 stop at
    # 20 mph, class 3 at 28 mph.
    for name, mph in (("us-class-1", 20), ("us-class-2", 20), ("us-class-3", 28)):
        assert m[name].rated_power <= 750 and m[name].peak_power <= 750
        assert m[name].cutoff_speed == pytest.approx(mph * MPH, rel=1e-4)
    assert m["us-class-2"].throttle and not m["us-class-1"].throttle


def test_levels_are_named_by_number_and_ratio():
    motor = find_motor("eu-pedelec")
    assert motor.level_name(0) == "off"
    assert motor.level_name(2) == "level 2 (100 %)"


def test_no_assist_at_or_above_cutoff_and_never_above_peak():
    motor = find_motor("eu-pedelec")
    speeds = np.linspace(0, 15, 301)
    for ratio in motor.levels:
        p = motor_power(motor, ratio, speeds, 200.0)
        assert (p[speeds >= motor.cutoff_speed] == 0).all()
        assert (p <= motor.peak_power).all()
    assert motor_power(motor, 3.0, 2.0, 400.0) == motor.peak_power
    assert motor_power(motor, 1.0, 2.0, 0.0) == 0.0  # pedal assist: no pedalling, no help
    assert taper_factor(motor.cutoff_speed - motor.taper / 2, motor.cutoff_speed, motor.taper) == pytest.approx(0.5)


def test_unknown_motor():
    with pytest.raises(VehicleError, match="eu-pedelec"):
        find_motor("turbo")


def test_suggested_level_is_the_lowest_that_works_brute_force(tmp_path):
    """Check the suggestion against an independent steady computation per level."""
    d = np.arange(0, 3001, 10.0)
    e = np.interp(d, [0, 500, 1500, 2000, 3000], [0, 0, 60, 130, 130])  # 6 % then 14 %
    track = read_gpx(profile_gpx(tmp_path / "c.gpx", d, e))
    terrain = build_terrain(track)
    vehicle = builtin_vehicles()["e-assist-cargo"]
    motor = find_motor(vehicle.motor)
    rider = Rider.for_vehicle(vehicle)
    wind, rho = _segment_air(terrain, Conditions())
    (hill,) = find_climbs(terrain)
    ((level, _),) = suggest_levels(rider, motor, [hill], terrain, wind, rho)
    g = terrain.grade[hill.start:hill.end]
    ok = []
    for lv in range(len(motor.levels) + 1):
        ratio = 0.0 if lv == 0 else motor.levels[lv - 1]
        # the rider at their climbing power, assist below the cut-off (speeds here are low)
        wheel = rider.climb_power_used * vehicle.efficiency + min(ratio * rider.climb_power_used, motor.peak_power)
        v = speed_for_power(wheel, mass=vehicle.mass, crr=vehicle.crr, cda=vehicle.cda, efficiency=1.0,
                            grade=g, air_density=rho[hill.start:hill.end])
        v = np.minimum(v, rider.target_speed)
        ok.append(bool(v.min() >= vehicle.min_stable_speed))
    assert ok.index(True) == level
    assert level > 0  # 14 % with 160 kg needs help


def test_battery_use_and_warning(tmp_path):
    d = np.arange(0, 20001, 10.0)
    e = 50 + 40 * np.sin(d / 1500)
    track = read_gpx(profile_gpx(tmp_path / "b.gpx", d, e))
    terrain = build_terrain(track)
    vehicle = builtin_vehicles()["e-assist-city"]
    plan = make_plan(track, terrain, Rider.for_vehicle(vehicle, cruise_level=2))
    assert plan.totals.battery > 0
    used = np.sum(plan.ride.motor_power * plan.ride.time) / plan.motor.drive_efficiency
    assert plan.totals.battery == pytest.approx(used)
    assert plan.totals.battery_fits
    assert (plan.ride.motor_power[plan.ride.mean_speed >= plan.motor.cutoff_speed] == 0).all()
