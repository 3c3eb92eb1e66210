"""Plans: plausibility for every vehicle, the trade's figures, checkpoints, W′ flags."""

from datetime import datetime, timedelta
from pathlib import Path

import numpy as np
import pytest
from gpxmaker import profile_gpx

from cardgen.io.gpx import read_gpx
from cardgen.physics.effort import sustainable_climb_power
from cardgen.physics.forces import Air, gravity_power
from cardgen.physics.steady import power_for_speed, speed_for_power
from cardgen.plan import checkpoint_windows, make_plan
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.render.exports import route_json
from cardgen.route.checkpoints import checkpoints_from_waypoints
from cardgen.route.terrain import build_terrain

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
KMH = 1 / 3.6


@pytest.fixture(scope="module")
def hill_loop():
    track = read_gpx(SAMPLES / "hill-loop.gpx")
    return track, build_terrain(track)


@pytest.mark.parametrize("name", sorted(builtin_vehicles()))
def test_every_vehicle_gets_a_plausible_plan(hill_loop, name):
    track, terrain = hill_loop
    vehicle = builtin_vehicles()[name]
    plan = make_plan(track, terrain, Rider.for_vehicle(vehicle))
    ride = plan.ride
    assert np.isfinite(ride.speed).all() and (ride.time > 0).all()
    assert (ride.speed <= vehicle.max_descent_speed + 1e-9).all()
    average = terrain.length / plan.totals.time * 3.6
    assert 5 < average < 35, f"{name}: {average:.1f} km/h average on a 26 km hilly loop"
    assert plan.climbs and plan.descents
    for c in plan.climbs:
        assert c.time > 0 and c.power_for_target > 0
        assert (c.assist_level is None) == (vehicle.motor is None)
    # json-ready
    data = route_json(plan)
    assert data["totals"]["time_s"] == pytest.approx(plan.totals.time)


# Figures of the trade, common practice, no published source (±15 %): a 250 kg cargo
# bike with Crr 0.008, CdA 0.6, ρ 1.2, all power at the wheel.
CARGO = dict(mass=250.0, crr=0.008, cda=0.6, air_density=1.2, efficiency=1.0, bearings=False)


def test_cargo_bike_figures_common_practice():
    assert speed_for_power(200.0, **CARGO) / KMH == pytest.approx(22, rel=0.15)
    assert speed_for_power(200.0, grade=0.05, **CARGO) / KMH == pytest.approx(5, rel=0.15)
    assert speed_for_power(200.0, grade=0.10, **CARGO) / KMH < 3
    assert power_for_speed(22 * KMH, grade=0.10, **CARGO) == pytest.approx(1700, rel=0.15)


def test_descending_ten_percent_engages_cap_and_warnings(tmp_path):
    # common practice, no published source: 100 kg upright rider at 100 W down 10 %
    # reaches about 58 km/h with well over 1,500 W from gravity
    upright = dict(mass=100.0, crr=0.008, cda=0.6, air_density=1.2, efficiency=1.0, bearings=False)
    v = speed_for_power(100.0, grade=-0.10, **upright)
    assert v / KMH == pytest.approx(58, rel=0.10)
    assert -gravity_power(v, 100.0, -0.10) > 1500
    d = np.arange(0, 4001, 10.0)
    e = np.interp(d, [0, 500, 3500, 4000], [400, 400, 100, 100])
    track = read_gpx(profile_gpx(tmp_path / "down.gpx", d, e))
    vehicle = builtin_vehicles()["city-upright"]
    plan = make_plan(track, build_terrain(track), Rider.for_vehicle(vehicle))
    (descent,) = plan.descents
    assert {w.code for w in descent.warnings} >= {"fast"}
    assert descent.max_speed <= vehicle.max_descent_speed + 1e-9
    assert descent.braking_energy > 0


def test_the_plan_never_runs_w_prime_out_and_steady_never_spends_it(tmp_path):
    """A 6 km climb at 8 % between 10 km flats, for a rider allowed 1.3 × CP: the plan spends W′ on it but
    never below zero (−1 % for the ride's inertia), so no climb is flagged; the steady
    style never rides above CP, where W′ is not spent at all (Skiba et al. 2015)."""
    d = np.arange(0, 26001, 10.0)
    e = np.interp(d, [0, 10000, 16000, 26000], [0, 0, 480, 480])  # 6 km at 8 %
    track = read_gpx(profile_gpx(tmp_path / "long.gpx", d, e))
    vehicle = builtin_vehicles()["road-hoods"]
    given = dict(cp=220.0, w_prime=12000.0, flat_power=150.0, climb_share=0.3)
    plan = make_plan(track, build_terrain(track), Rider.for_vehicle(vehicle, **given))
    (climb,) = plan.climbs
    assert -0.01 * 12000.0 <= climb.w_prime_low < 0.5 * 12000.0
    assert not any(w.code == "w-prime" for w in climb.warnings)
    steady = make_plan(track, build_terrain(track), Rider.for_vehicle(vehicle, pacing="steady", **given))
    assert np.max(steady.ride.rider_power) <= 220.0 + 1e-9
    assert steady.climbs[0].w_prime_low == pytest.approx(12000.0)


def test_checkpoint_windows_on_the_day_ride():
    track = read_gpx(SAMPLES / "day-ride.gpx")
    terrain = build_terrain(track)
    lib = builtin_vehicles()
    plans = [make_plan(track, terrain, Rider.for_vehicle(lib[n])) for n in ("road-drops", "handcycle")]
    checkpoints = checkpoints_from_waypoints(track, terrain)
    assert [c.name for c in checkpoints][:1] == ["Checkpoint 1: Brenquist Cross"]
    start = datetime(2026, 6, 6, 8, 0)
    rows, finish = checkpoint_windows(plans, checkpoints, start, margin=900)
    assert len(rows) == 4
    for row in rows:
        fast, slow = sorted(row.arrivals)
        # the margin, then to the whole minute outward (opens down, closes up)
        assert timedelta(0) <= fast - timedelta(seconds=900) - row.opens < timedelta(minutes=1)
        assert timedelta(0) <= row.closes - (slow + timedelta(seconds=900)) < timedelta(minutes=1)
        assert row.opens.second == row.closes.second == 0
    assert [r.checkpoint.distance for r in rows] == sorted(r.checkpoint.distance for r in rows)
    latest = start + timedelta(seconds=max(p.totals.time for p in plans) + 900)
    assert timedelta(0) <= finish.closes - latest < timedelta(minutes=1)


def test_cue_arrival_times_increase(hill_loop):
    track, terrain = hill_loop
    plan = make_plan(track, terrain, Rider.for_vehicle(builtin_vehicles()["tandem"]))
    times = [c.elapsed for c in plan.cues]
    assert times == sorted(times) and times[-1] <= plan.totals.time


@pytest.mark.parametrize("name", list(builtin_vehicles()))
def test_food_energy_implies_a_published_gross_efficiency(hill_loop, name):
    """Work / food energy must be a gross efficiency that people reach: leg cycling
    13–24 % (Nickleberry & Brooks 1996, MSSE 28:1396, competitive and recreational
    riders); arm cranking about 10 % at low power to 17.9 ± 1.6 % in elite
    handcyclists (Janssen et al. 2001, JRRD 38:33; Groen et al. 2010)."""
    track, terrain = hill_loop
    vehicle = builtin_vehicles()[name]
    plan = make_plan(track, terrain, Rider.for_vehicle(vehicle))
    efficiency = plan.totals.energy / plan.totals.food_energy
    low, high = (0.10, 0.195) if vehicle.propulsion == "arms" else (0.13, 0.24)
    assert low <= efficiency <= high


def _long_climb(tmp_path):
    d = np.arange(0, 7001, 10.0)
    e = np.interp(d, [0, 1000, 6000, 7000], [0, 0, 400, 400])  # 5 km at 8 %
    track = read_gpx(profile_gpx(tmp_path / "climb.gpx", d, e))
    return track, build_terrain(track)


def _climb_between_flats(tmp_path):
    d = np.arange(0, 25001, 10.0)
    e = np.interp(d, [0, 10000, 15000, 25000], [0, 0, 400, 400])  # 10 km flat, 5 km at 8 %, 10 km flat
    track = read_gpx(profile_gpx(tmp_path / "climb.gpx", d, e))
    return track, build_terrain(track)


def test_a_long_climb_spends_w_prime_as_the_critical_power_model_allows(tmp_path):
    """Between flats the plan climbs above CP but no longer than W′ allows: at a
    constant P above CP, W′ lasts t = W′/(P − CP) (Monod & Scherrer 1965), so the
    work above CP on the climb is W′ less what the plan keeps in hand; and the ride
    never runs W′ out, so no climb is flagged."""
    track, terrain = _climb_between_flats(tmp_path)
    vehicle = builtin_vehicles()["road-hoods"]
    cp, w_prime = 200.0, 14000.0
    rider = Rider.for_vehicle(vehicle, cp=cp, w_prime=w_prime, flat_power=150.0, climb_share=0.3)
    plan = make_plan(track, terrain, rider)
    (climb,) = plan.climbs
    assert climb.time > 20 * 60
    assert cp < climb.rider_power < cp * 1.3
    assert "w-prime" not in {w.code for w in climb.warnings}
    assert climb.w_prime_low >= -0.01 * w_prime
    above = (climb.rider_power - cp) * climb.time
    assert above == pytest.approx(w_prime, rel=0.08)


def test_the_safe_climbing_power_is_the_critical_power_model(tmp_path):
    """sustainable_climb_power: the steady power whose work above CP over the climb is the
    W′ left, (P − CP)·T(P) = W′ (Monod & Scherrer 1965)."""
    track, terrain = _long_climb(tmp_path)
    vehicle = builtin_vehicles()["road-hoods"]
    cp, w_prime = 200.0, 14000.0
    res = vehicle.resistance
    seg = slice(100, 600)  # the 8 % stretch
    safe = sustainable_climb_power(
        cp=cp,
        climb_power=260.0,
        w_prime_left=w_prime,
        step=terrain.step,
        grade=terrain.grade[seg],
        air=Air(0.0, 1.2),
        resistance=res,
    )
    assert cp < safe < 260.0
    speed = speed_for_power(
        safe,
        mass=res.mass,
        crr=res.crr,
        cda=res.cda,
        efficiency=res.efficiency,
        grade=terrain.grade[seg],
        air_density=1.2,
    )
    t = np.sum(terrain.step * np.sqrt(1 + terrain.grade[seg] ** 2) / speed)
    assert (safe - cp) * t == pytest.approx(w_prime, rel=0.001)


@pytest.mark.parametrize(("grade", "metres"), [(0.0, 14.17), (-0.10, 23.62)])
def test_braking_distance_follows_the_aashto_formula(grade, metres):
    """AASHTO Guide for the Development of Bicycle Facilities (1999): braking distance
    V²/(254·(f + G)) with f = 0.25 [S]; 30 km/h gives 14.2 m on the flat and 23.6 m at
    −10 % (docs/sources.md §7 [C], without the 2.5 s reaction distance)."""
    from cardgen.physics.braking import braking
    from cardgen.physics.ride import speed_limit_profile

    d = np.arange(0, 101, 0.01)
    cap = np.full(d.size, np.inf)
    cap[-1] = 0.0
    limit = speed_limit_profile(d, cap, braking(np.full(d.size - 1, grade)))
    at = np.interp(30 / 3.6, limit[::-1], d[::-1])
    assert d[-1] - at == pytest.approx(metres, abs=0.05)


def test_curve_speed_is_the_speed_of_the_friction_factor_taken():
    """FHWA-HRT-04-103 (2004) gives curve speeds as a friction factor f = v²/(g·R)
    (docs/sources.md §7 [V]): at f = 0.2 on a 25 m radius, v = √(0.2·9.80665·25)
    = 7.00 m/s [C]; a straight (R = inf) allows any speed."""
    from cardgen.physics.braking import curve_speed

    v = curve_speed(0.2 * 9.80665, np.array([25.0, np.inf]))
    assert v[0] == pytest.approx(7.0024, abs=1e-4)
    assert v[0] ** 2 / (9.80665 * 25.0) == pytest.approx(0.2)
    assert v[1] == np.inf


def _bends(tmp_path, name, turns):
    """A descent with bends: (distance [m], angle [deg], radius [m]) on a −7 % road."""
    from gpxmaker import to_latlon, write_gpx

    step, x, y, heading = 2.0, [0.0], [0.0], 0.0
    events = sorted(turns)
    s = 0.0
    while s < 3000:
        for at, angle, radius in events:
            arc = np.radians(abs(angle)) * radius
            if at <= s < at + arc:
                heading += np.sign(angle) * step / radius
        x.append(x[-1] + step * np.sin(heading))
        y.append(y[-1] + step * np.cos(heading))
        s += step
    x, y = np.array(x), np.array(y)
    dist = np.arange(x.size) * step
    ele = 300 - 0.07 * np.minimum(dist, 2500)
    lat, lon = to_latlon(x, y)
    return write_gpx(tmp_path / f"{name}.gpx", lat, lon, ele)


def test_two_hairpins_on_one_descent_give_two_warnings_and_a_corner_after_it_one_more(tmp_path):
    path = _bends(tmp_path, "hairpins", [(1000, 180, 8), (1800, -180, 8), (2540, 90, 12)])
    track = read_gpx(path)
    plan = make_plan(track, build_terrain(track), Rider.for_vehicle(builtin_vehicles()["road-hoods"]))
    on_descent = [w for d in plan.descents for w in d.warnings if w.code == "curve"]
    after = [w for w in plan.warnings if w.code == "curve"]
    places = sorted(w.value("where") for w in on_descent + after)
    assert (
        len([p for p in places if 950 < p < 1100]) == 1 and len([p for p in places if 1750 < p < 1900]) == 1
    )
    assert any(2500 < p < 2600 for p in places)  # 40 m after the descent ends


def test_a_handcyclist_crawling_up_a_steep_ramp_is_warned(tmp_path):
    """A handcyclist (CP 65 W) on a long 12 % ramp: the crawl, the target watts above
    CP and the traction of the driven front wheel are all said."""
    d = np.arange(0, 3001, 10.0)
    e = np.interp(d, [0, 500, 2500, 3000], [0, 0, 240, 240])
    track = read_gpx(profile_gpx(tmp_path / "ramp.gpx", d, e))
    rider = Rider.for_vehicle(builtin_vehicles()["handcycle"], cp=65.0, flat_power=45.0)
    (climb,) = make_plan(track, build_terrain(track), rider).climbs
    codes = {w.code for w in climb.warnings}
    assert {"crawl", "over-cp", "traction"} <= codes
    over = next(w for w in climb.warnings if w.code == "over-cp")
    assert over.value("power") > 65 and over.value("speed") < rider.target_speed
    assert climb.time_above_cp >= 0 and climb.w_prime_used >= 0


def test_a_strong_road_rider_gets_no_rider_cautions(hill_loop):
    track, terrain = hill_loop
    # Pellowind Bank averages about 9.3 % as read (9.5 % as drawn): 14 km/h takes
    # about 330 W, so this rider's CP is above that
    rider = Rider.for_vehicle(builtin_vehicles()["road-drops"], cp=340.0, flat_power=200.0)
    for climb in make_plan(track, terrain, rider).climbs:
        assert not {"crawl", "over-cp", "traction"} & {w.code for w in climb.warnings}
