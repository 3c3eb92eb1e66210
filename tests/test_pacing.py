"""Pacing: the day's effort, the styles, the battery that runs out, the trace."""

from __future__ import annotations

import csv
import dataclasses
import io

import numpy as np
import pytest
from gpxmaker import profile_gpx
from scipy.integrate import solve_ivp

from cardgen.io.gpx import read_gpx
from cardgen.physics.effort import sustainable_power_omni
from cardgen.plan import make_plan
from cardgen.plan.pacing import Course, pace
from cardgen.profiles.motors import find_motor
from cardgen.profiles.riders import Rider
from cardgen.profiles.vehicles import builtin_vehicles
from cardgen.route.terrain import build_terrain

G = 9.80665


def _route(tmp_path, length_km: float, name: str):
    """Rolling hills of about 4–6 % for ``length_km``."""
    d = np.arange(0, length_km * 1000 + 1, 10.0)
    e = 40 * np.sin(2 * np.pi * d / 5000) + 15 * np.sin(2 * np.pi * d / 1700)
    track = read_gpx(profile_gpx(tmp_path / f"{name}.gpx", d, e))
    return track, build_terrain(track)


@pytest.mark.parametrize("vehicle", ["road-hoods", "city-upright", "handcycle"])
def test_by_default_a_ride_over_an_hour_stays_below_85_percent_of_cp(tmp_path, vehicle):
    """More than an hour never averages above 85 % of CP by default (common
    practice, no published source), and a 6-hour ride is planned below a short one."""
    rider = Rider.for_vehicle(builtin_vehicles()[vehicle])
    short = make_plan(*_route(tmp_path, 15, "short"), rider)
    long = make_plan(*_route(tmp_path, 120, "long"), rider)
    assert long.totals.time > 3600 and not long.effort.given
    assert long.effort.mean_power <= 0.85 * rider.cp
    if short.totals.time > 3600:
        assert short.effort.mean_power <= 0.85 * rider.cp
    assert long.effort.mean_power < short.effort.mean_power
    # the default's ride length is the time at constant power: longer than the paced
    # ride, so the default errs low
    assert long.totals.time <= long.effort.duration <= 1.3 * long.totals.time


def test_the_power_duration_model_falls_with_the_log_of_time():
    """Below 30 min the critical-power model P = CP + W′/t (Monod & Scherrer 1965);
    beyond, the omni-domain model's decline A·ln(t/T) (Puchowicz et al. 2020)."""
    cp, w_prime = 250.0, 20000.0
    assert sustainable_power_omni(600.0, cp, w_prime) == pytest.approx(cp + w_prime / 600)
    one, six = sustainable_power_omni(np.array([3600.0, 6 * 3600.0]), cp, w_prime)
    assert six < one < cp + w_prime / 3600
    # the decline between 1 h and 6 h is A·CP·ln 6 less the W′ term's change
    assert one - six == pytest.approx(0.08 * cp * np.log(6) + w_prime / 3600 - w_prime / 21600)
    assert np.isnan(sustainable_power_omni(0.0, cp, w_prime))


def test_a_given_effort_is_the_rides_mean_power(tmp_path):
    rider = Rider.for_vehicle(builtin_vehicles()["road-hoods"], flat_power=140.0)
    plan = make_plan(*_route(tmp_path, 30, "given"), rider)
    assert plan.effort.given and plan.effort.style == "best"
    assert plan.effort.mean_power == pytest.approx(140.0, rel=0.01)  # the planner fits the mean to 1 %


def test_steady_never_goes_above_cp_and_is_the_handcycles_default(tmp_path):
    lib = builtin_vehicles()
    hand = Rider.for_vehicle(lib["handcycle"])
    assert hand.pacing_style == "steady" and Rider.for_vehicle(lib["road-hoods"]).pacing_style == "best"
    plan = make_plan(*_route(tmp_path, 20, "steady"), hand)
    assert plan.effort.style == "steady"
    assert np.max(plan.ride.rider_power) <= hand.cp + 1e-9
    assert np.min(plan.w_prime_balance) == pytest.approx(hand.w_prime)


def test_a_given_climbing_power_is_the_most_the_plan_asks(tmp_path):
    """climb_w is the rider's (or the coach's) own climbing power: "best" pacing
    spends W′ above CP on climbs, but never above that setting; without it the plan
    goes up to CP × (1 + climb_share). The card's "hold" figure follows."""
    from cardgen.render.advice import climb_advice

    route = _route(tmp_path, 30, "climb-w")
    vehicle = builtin_vehicles()["road-drops"]
    free = make_plan(*route, Rider.for_vehicle(vehicle, cp=250.0))
    assert np.max(free.ride.rider_power) > 240.0  # the plan climbs above 240 W when it may
    capped = make_plan(*route, Rider.for_vehicle(vehicle, cp=250.0, climb_power=230.0))
    assert np.max(capped.ride.rider_power) <= 230.0 + 1e-6
    for row in capped.climbs:
        held = int(climb_advice(row, capped).split()[1])
        assert held <= 230


def test_best_is_never_slower_than_steady_at_the_same_mean(tmp_path):
    """More freedom (a ceiling above CP) cannot make the optimum slower."""
    track, terrain = _route(tmp_path, 25, "styles")
    v = builtin_vehicles()["road-hoods"]
    best = make_plan(track, terrain, Rider.for_vehicle(v, flat_power=150.0, pacing="best"))
    steady = make_plan(track, terrain, Rider.for_vehicle(v, flat_power=150.0, pacing="steady"))
    assert best.effort.mean_power == pytest.approx(steady.effort.mean_power, rel=0.01)
    assert best.totals.time <= steady.totals.time * 1.002


def _battery_course():
    """5 km flat, 6 km at 6 %, 9 km flat; an EU pedelec at assist ratio 1.0 with a
    60 Wh battery (54 Wh usable)."""
    s = np.arange(0.0, 20000.0 + 10, 10.0)
    z = np.interp(s, [0, 5000, 11000, 20000], [0, 0, 360, 360])
    vehicle = builtin_vehicles()["e-assist-city"]
    motor = dataclasses.replace(find_motor("eu-pedelec"), battery=60 * 3600.0)
    grade = np.diff(z) / 10.0
    n = grade.size
    course = Course(
        step=10.0,
        grade=grade,
        headwind=np.zeros(n),
        air_density=np.full(n, 1.2),
        distance=s,
        speed_cap=np.full(s.size, vehicle.max_descent_speed),
        deceleration=np.full(n, 0.25 * G),
        resistance=vehicle.resistance,
        motor=motor,
        assist_ratio=np.full(n, 1.0),
    )
    return course, vehicle, motor


def _integrate(course, vehicle, motor, power, battery_limit: bool, start: float):
    """solve_ivp of the equation of motion (Martin et al. 1998) with the motor's
    assist min(r·P, peak) tapered to zero at the cut-off (Regulation (EU) No
    168/2013, Art. 2(2)(h)), and the battery drawn at the motor's power over its drive
    efficiency; with ``battery_limit`` the motor gives nothing once the usable energy
    is spent. Returns time [s] at each km."""
    r = vehicle.resistance
    m_e = r.mass + r.wheel_inertia_mass
    usable = motor.battery * motor.usable_share

    def rhs(x, y):
        v, _, used = y
        v = max(v, 0.05)
        i = min(int(x / 10.0), course.grade.size - 1)
        p, g = power[i], course.grade[i]
        taper = np.clip((motor.cutoff_speed - v) / motor.taper, 0.0, 1.0)
        boost = min(1.0 * p, motor.peak_power) * taper
        if battery_limit and used >= usable:
            boost = 0.0
        theta = np.arctan(g)
        force = 0.5 * 1.2 * r.cda * v * v + r.mass * G * (r.crr * np.cos(theta) + np.sin(theta))
        force += 0.091 + 0.0087 * v if r.bearings else 0.0
        dv = ((p * r.efficiency + boost) / v - force) / (m_e * v)
        return [dv, 1.0 / v, boost / motor.drive_efficiency / v]

    km = np.arange(0.0, 20001.0, 1000.0)
    sol = solve_ivp(rhs, (0.0, 20000.0), [start, 0.0, 0.0], t_eval=km, max_step=5.0, rtol=1e-8, atol=1e-6)
    assert sol.success
    return sol.y[1]


def test_the_motor_stops_when_the_battery_is_empty_mid_climb():
    """The battery runs out half-way up the climb; every later arrival agrees with an
    independent integration (solve_ivp, the battery as a state) within 1 % (the
    issue's bound), while a motor that kept running would be far too early."""
    course, vehicle, motor = _battery_course()
    paced = pace(course, mean_power=100.0, cp=150.0, w_prime=10500.0, top=165.0)
    assert paced.empty_at is not None and 6000 < paced.empty_at < 10500  # on the climb
    power = paced.ride.rider_power
    ours = np.interp(np.arange(0.0, 20001.0, 1000.0), course.distance, paced.ride.elapsed)
    start = float(paced.ride.speed[0])
    theirs = _integrate(course, vehicle, motor, power, battery_limit=True, start=start)
    running = _integrate(course, vehicle, motor, power, battery_limit=False, start=start)
    after = np.arange(21) * 1000 > paced.empty_at
    assert np.allclose(ours[1:], theirs[1:], rtol=0.01)
    assert np.all(running[after][-3:] < 0.95 * theirs[after][-3:])  # the old error is caught
    used = (
        np.sum(np.nan_to_num(paced.ride.motor_power * paced.ride.time, posinf=0.0)) / motor.drive_efficiency
    )
    assert used == pytest.approx(motor.usable_battery, rel=0.005)


def test_a_plan_already_ridden_is_the_first_round_of_the_battery_cut():
    """Handing ``pace`` the plan it would work out first (``fitted``) changes nothing:
    the same power, ride and switch-off, bit for bit."""
    course, _, _ = _battery_course()
    rider = dict(mean_power=100.0, cp=150.0, w_prime=10500.0, top=165.0)
    uncut = pace(course, **rider, cut=False)
    fresh = pace(course, **rider)
    reused = pace(course, **rider, fitted=uncut)
    assert reused.empty_at == fresh.empty_at
    assert np.array_equal(reused.pacing.power, fresh.pacing.power)
    assert np.array_equal(reused.ride.elapsed, fresh.ride.elapsed)
    assert np.array_equal(reused.assist_ratio, fresh.assist_ratio)


@pytest.mark.parametrize("motor", [False, True])
def test_the_grids_block_times_are_the_times_at_the_grid_powers(motor):
    """The shared grid solves each power from the speeds of the one before: its block
    times are the sums of :meth:`Course.times` worked out from nothing at the same
    powers (within the solver's 1e-6), with and without a motor."""
    from cardgen.plan import pacing

    course, _, _ = _battery_course()
    if not motor:
        course = dataclasses.replace(course, motor=None, assist_ratio=None)
    pacing._grids.clear()
    grid = pacing._Grid(course)
    ks = [20, 21, 22, 40, 41, 60, 61, 62, 75]
    ratio = 1.0 if motor else 0.0
    columns = grid._columns(course, ks[:3], ratio, {})  # the first from nothing
    columns.update(grid._columns(course, ks[3:], ratio, columns))  # from the nearest
    powers = pacing.GRID_LOW * pacing.GRID_RATIO ** np.asarray(ks, dtype=float)
    cold = np.add.reduceat(course.times(powers, ratio=ratio), grid.starts[:-1], axis=1)
    warm = np.exp(np.stack([columns[k] for k in ks]))
    assert np.allclose(warm, cold, rtol=1e-6, atol=0)


def test_route_trace_writes_every_node(tmp_path, cli):
    track_path = profile_gpx(
        tmp_path / "t.gpx", np.arange(0, 5001, 10.0), 30 * np.sin(np.arange(0, 5001, 10.0) / 800)
    )
    out = tmp_path / "trace.csv"
    code, _, err = cli(
        "route", str(track_path), "--cp", "230", "--w-prime", "16000", "--pacing", "best", "--trace", str(out)
    )
    assert code == 0, err
    rows = list(csv.reader(io.StringIO(out.read_text())))
    assert rows[0] == [
        "distance_m",
        "elevation_m",
        "grade_pct",
        "rider_w",
        "motor_w",
        "speed_kmh",
        "time_s",
        "w_prime_j",
    ]
    data = np.array(rows[1:], dtype=float)
    track = read_gpx(track_path)
    assert data.shape[0] == build_terrain(track).distance.size
    assert np.all(np.diff(data[:, 0]) > 0) and np.all(np.diff(data[:, 6]) > 0)
    assert data[0, 7] == 16000 and np.all(data[:, 7] >= -160)
    assert np.max(data[:, 3]) <= 230 * 1.1 + 1e-6
    # a bad place for the trace: one line, exit 1, nothing else written
    code, _, err = cli("route", str(track_path), "--trace", str(tmp_path / "no" / "x.csv"))
    assert code == 1 and "cannot write the trace" in err and err.count("\n") == 1


def test_the_pacing_style_is_a_rider_key_and_a_csv_column(tmp_path):
    from cardgen.config import load_config
    from cardgen.errors import CardgenError

    d = np.arange(0, 3001, 10.0)
    profile_gpx(tmp_path / "r.gpx", d, 10 * np.sin(d / 500))
    (tmp_path / "riders.csv").write_text("name,vehicle,pacing\nAda,road-hoods,steady\n", encoding="utf-8")
    site = tmp_path / "site.toml"
    site.write_text(
        '[[routes]]\ngpx = "r.gpx"\n\n[[riders]]\nname = "Bo"\nvehicle = "handcycle"\npacing = "best"\n\n'
        '[[riders]]\ncsv = "riders.csv"\n',
        encoding="utf-8",
    )
    riders = {r.rider.name: r.rider for r in load_config(site).riders}
    assert riders["Bo"].pacing_style == "best" and riders["Ada"].pacing_style == "steady"
    site.write_text(
        '[[routes]]\ngpx = "r.gpx"\n\n[[riders]]\nname = "Bo"\nvehicle = "handcycle"\npacing = "fast"\n'
    )
    with pytest.raises(CardgenError, match="pacing"):
        load_config(site)
