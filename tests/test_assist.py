"""E-assist envelopes, motor power and the level suggestion."""

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.errors import VehicleError
from cardgen.io.gpx import read_gpx
from cardgen.physics.assist import motor_power, taper_factor
from cardgen.physics.forces import Air
from cardgen.plan import make_plan
from cardgen.plan.rider import BATTERY_RESERVE
from cardgen.profiles.motors import builtin_motors, find_motor
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain

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
    assert taper_factor(
        motor.cutoff_speed - motor.taper / 2, motor.cutoff_speed, motor.taper
    ) == pytest.approx(0.5)


def test_unknown_motor():
    with pytest.raises(VehicleError, match="eu-pedelec"):
        find_motor("no-such-motor")


def _battery_share(vehicle, share):
    """``vehicle`` with ``share`` of its motor's catalogue battery fitted: a battery
    short for 40 km is as short as the catalogue's for 160 km, at a quarter of the
    planning (the level search re-plans the whole route for each choice it tries)."""
    import dataclasses

    return dataclasses.replace(vehicle, battery=find_motor(vehicle.motor).battery * share)


@pytest.mark.parametrize(("km", "share"), [(20, 1.0), (40, 0.25)])
def test_battery_use_is_bounded_and_warned_exactly_when_it_does_not_fit(tmp_path, km, share):
    """The motor gives at most ratio × the rider's power (pedal assist; EN 15194), so the
    battery can hold no more than ratio × the rider's work / drive efficiency; the
    levels keep the reserve (on 40 km of rollers with a quarter battery the level
    asked for cannot last the route within it, so it runs until the budget is spent
    and the plan says where it is switched off); and the warning appears exactly when
    the use passes the usable capacity less the reserve."""
    d = np.arange(0, km * 1000 + 1, 10.0)
    e = 50 + 40 * np.sin(d / 1500)
    track = read_gpx(profile_gpx(tmp_path / "b.gpx", d, e))
    terrain = build_terrain(track)
    vehicle = _battery_share(builtin_vehicles()["e-assist-city"], share)
    plan = make_plan(track, terrain, Rider.for_vehicle(vehicle, assist_between_climbs=2))
    motor = plan.motor
    ratio = max([motor.levels[1], *(motor.levels[c.assist_level - 1] for c in plan.climbs if c.assist_level)])
    assert 0 <= plan.totals.battery <= ratio * plan.totals.energy / motor.drive_efficiency
    assert plan.totals.battery <= motor.usable_battery * (1 - BATTERY_RESERVE)
    assert plan.totals.battery > 0
    # switched off, not left at nothing: the draw stops at the budget, where the plan says
    off = plan.effort.assist_off_at
    assert (off is not None) == (share < 1.0)
    if off is not None:
        after = plan.terrain.distance[:-1] >= off + plan.terrain.step
        assert not np.any(plan.ride.motor_power[after] > 0)
        assert plan.totals.battery == pytest.approx(motor.usable_battery * (1 - BATTERY_RESERVE), rel=1e-3)
    over = plan.totals.battery > motor.usable_battery * (1 - BATTERY_RESERVE)
    assert ("battery" in {w.code for w in plan.warnings}) == over
    assert plan.totals.battery_fits == (not over)


def _hilly(tmp_path, km, name="hilly.gpx"):
    d = np.arange(0, km * 1000 + 1, 10.0)
    e = 200 + 150 * np.sin(d / 2500.0) + 60 * np.sin(d / 700.0)
    track = read_gpx(profile_gpx(tmp_path / name, d, e))
    return track, build_terrain(track)


def test_a_route_longer_than_the_battery_keeps_the_reserve(tmp_path):
    """The levels asked for would empty the battery half-way; the levels chosen keep
    the reserve (the battery drawn summed here from the ride's motor power and times,
    at the drive efficiency), so no reserve warning stands, and the climbs do not all
    get the top level."""
    track, terrain = _hilly(tmp_path, 40)
    vehicle = _battery_share(builtin_vehicles()["e-assist-cargo"], 0.25)
    plan = make_plan(track, terrain, Rider.for_vehicle(vehicle, assist_between_climbs=2))
    budget = plan.motor.usable_battery * (1 - BATTERY_RESERVE)
    ride = plan.ride
    drawn = (
        np.sum(np.where(ride.motor_power > 0, ride.motor_power * ride.time, 0.0))
        / plan.motor.drive_efficiency
    )
    assert 0 < drawn <= budget and plan.effort.battery_empty_at is None
    assert "battery" not in {w.code for w in plan.warnings}
    assert plan.climbs and min(c.assist_level for c in plan.climbs) < len(plan.motor.levels)


def test_with_battery_to_spare_each_climb_gets_the_level_that_holds_the_target_within_cp(tmp_path):
    track, terrain = _hilly(tmp_path, 20)
    vehicle = builtin_vehicles()["e-assist-city"]
    rider = Rider.for_vehicle(vehicle, assist_between_climbs=0)
    plan = make_plan(track, terrain, rider)
    assert plan.totals.battery_fits and plan.climbs
    for c in plan.climbs:
        assert c.power_for_target <= rider.cp * 1.001 or c.assist_level == len(plan.motor.levels)
    # a simpler plan the test builds: the same bike and rider with the motor switched off
    import dataclasses

    unassisted = dataclasses.replace(rider, vehicle=dataclasses.replace(vehicle, motor=None))
    off = make_plan(track, terrain, unassisted)
    assert plan.totals.time < off.totals.time


def test_each_climb_says_the_battery_left_at_its_top(tmp_path):
    track, terrain = _hilly(tmp_path, 20, "left.gpx")
    plan = make_plan(track, terrain, Rider.for_vehicle(builtin_vehicles()["e-assist-city"]))
    lefts = [c.battery_left for c in plan.climbs]
    assert lefts == sorted(lefts, reverse=True)  # it only goes down
    last = plan.climbs[-1].climb.end
    drawn = np.sum(plan.ride.motor_power[:last] * plan.ride.time[:last]) / plan.motor.drive_efficiency
    assert lefts[-1] == pytest.approx(plan.motor.usable_battery - drawn)


@pytest.mark.parametrize("motor_name", sorted(builtin_motors()))
@pytest.mark.parametrize("vehicle_name", ["e-assist-city", "e-assist-cargo"])
def test_steady_assisted_speed_near_the_cutoff_matches_a_root_finder(vehicle_name, motor_name):
    """The steady speed with assist is the root of P_r·E + boost·taper(v) = P_need(v);
    checked against scipy's brentq (an independent root finder) on grades where the
    speed lands below, inside and above the taper, for every level of every built-in
    motor envelope."""
    from scipy.optimize import brentq

    from cardgen.physics.assist import assisted_speed
    from cardgen.physics.steady import power_for_speed

    motor, res = find_motor(motor_name), builtin_vehicles()[vehicle_name].resistance
    phys = dict(mass=res.mass, crr=res.crr, cda=res.cda, efficiency=1.0, headwind=0.0, air_density=1.2)
    for ratio in motor.levels:
        for grade in (-0.02, 0.0, 0.01, 0.03, 0.08):
            for rider_w in (60.0, 120.0, 250.0):
                got = float(
                    assisted_speed(motor, ratio, rider_w, resistance=res, grade=grade, air=Air(0.0, 1.2))
                )

                def surplus(v, grade=grade, rider_w=rider_w, ratio=ratio):
                    wheel = rider_w * res.efficiency + motor_power(motor, ratio, v, rider_w)
                    return wheel - float(power_for_speed(v, grade=grade, **phys))

                want = brentq(surplus, 0.01, 40.0, xtol=1e-9)
                assert got == pytest.approx(want, rel=1e-4), (ratio, grade, rider_w)


def test_the_level_between_climbs_gives_way_when_the_battery_is_short(tmp_path):
    """On a route that needs more than the battery, a rider who asks for the top level
    between climbs is planned lower there (and told so); with battery to spare the
    level asked for stands. More assist between climbs never makes it slower."""
    track, terrain = _hilly(tmp_path, 40)
    vehicle = builtin_vehicles()["e-assist-city"]
    top = len(find_motor(vehicle.motor).levels)
    short = _battery_share(vehicle, 0.25)
    long_plan = make_plan(track, terrain, Rider.for_vehicle(short, assist_between_climbs=top))
    assert long_plan.assist_between < top
    assert "assist-lowered" in {w.code for w in long_plan.warnings}
    short_track, short_terrain = _hilly(tmp_path, 15, "short.gpx")
    times = []
    for level in range(top + 1):
        plan = make_plan(short_track, short_terrain, Rider.for_vehicle(vehicle, assist_between_climbs=level))
        assert plan.assist_between == level and plan.totals.battery_fits
        times.append(plan.totals.time)
    assert times == sorted(times, reverse=True)


def test_within_cp_allows_a_short_pitch_that_w_prime_covers():
    """The lowest level "within CP" (critical-power model, Monod & Scherrer 1965):
    the climb's mean power at the target no more than CP, and the work above CP on
    its steeper pitch no more than W′. A 900 m climb at 4 % with 100 m at 8 %: at
    the level where the mean fits CP but the pitch does not, W′ decides."""
    from cardgen.physics.assist import climb_options, rider_power_for_speed

    vehicle = builtin_vehicles()["e-assist-cargo"]
    motor = find_motor(vehicle.motor)
    grade = np.full(90, 0.04)
    grade[40:50] = 0.08
    air = dict(air=Air(np.zeros(90), np.full(90, 1.2)))
    target = 10 / 3.6
    ratio = motor.levels[2]  # level 3
    need = rider_power_for_speed(motor, ratio, target, resistance=vehicle.resistance, grade=grade, **air)
    cp = float(np.mean(need)) + 1.0  # the climb's mean within CP at level 3; the 8 % pitch above it
    assert need[45] > cp
    excess = float((need[45] - cp) * 100.0 / target)  # [J] above CP on the pitch
    common = dict(
        climb_power=cp,
        cp=cp,
        target_speed=target,
        resistance=vehicle.resistance,
        grade=grade,
        step=10.0,
        **air,
    )
    lots = climb_options(motor, [(0, 90)], w_prime=excess * 1.5, **common)["within_cp"][:, 0]
    none = climb_options(motor, [(0, 90)], w_prime=excess * 0.5, **common)["within_cp"][:, 0]
    assert int(np.argmax(lots)) == 3  # level 3: W′ covers the pitch
    assert int(np.argmax(none)) == 4  # not enough W′: one level more


def test_the_taper_root_is_brentqs_and_keeps_an_end_without_a_crossing():
    """``falling_root`` against scipy's brentq (an independent root finder) on
    functions that fall through zero steeply, gently and not at all; where the
    function keeps one sign it gives the end the old bisection converged to."""
    from scipy.optimize import brentq

    from cardgen.physics.assist import falling_root

    roots = np.array([5.1, 6.2, 6.9, 5.0001])
    scale = np.array([1.0, 300.0, 0.01, 50.0])

    def fun(v, sel):  # a cubic that falls through zero at each root
        return -scale[sel] * (v - roots[sel]) * (1.0 + (v - 5.0) ** 2)

    got = falling_root(fun, np.full(4, 5.0), np.full(4, 7.0))
    for k in range(4):
        want = brentq(lambda v, k=k: float(fun(np.array([v]), np.array([k]))[0]), 5.0, 7.0, xtol=1e-14)
        assert abs(got[k] - want) <= 2e-12  # the docstring's 1e-12 m/s, both ends of it
    # no crossing: positive throughout gives the upper end, negative the lower
    ends = falling_root(
        lambda v, sel: np.where(sel == 0, 1.0, -1.0) + 0 * v, np.full(2, 5.0), np.full(2, 7.0)
    )
    assert ends.tolist() == [7.0, 5.0]


def test_assisted_speed_from_a_guess_is_the_same_speed():
    """A first guess (the speeds at a nearby power, as the pacing grid passes them)
    changes the steps, not the answer: within the solver's tolerance (1e-6) of the
    speeds without one, on grades where many segments end inside the taper."""
    from cardgen.physics.assist import assisted_speed

    motor, res = find_motor("eu-pedelec"), builtin_vehicles()["e-assist-city"].resistance
    grade = np.linspace(-0.06, 0.10, 400)
    air = Air(np.linspace(-3.0, 3.0, 400), 1.2)
    for ratio in motor.levels:
        before = None
        for power in (60.0, 65.0, 140.0):
            cold = assisted_speed(motor, ratio, power, resistance=res, grade=grade, air=air)
            warm = assisted_speed(motor, ratio, power, resistance=res, grade=grade, air=air, guess=before)
            assert np.max(np.abs(warm - cold) / cold) < 1e-6
            before = warm
