"""Golden numbers: every watts, speed, time, curve slow-to speed and battery figure the
demo's cards and ``plan.json`` print, the moving time, and each food leg's riding time,
energy, carbohydrate and fluid, against values worked out here without cardgen's
physics.

What is cardgen's and what is the test's own:
- inputs come from cardgen: the demo's configuration (riders, vehicles, motors,
  conditions), the terrain (grade, heading, smoothed elevation on the 10 m grid) and,
  for the climb times, the plan's own power at each 10 m (the pacing plan is an input
  to the ride, not a printed number);
- every formula is written out below: the power balance of Martin et al. (1998), the
  ISA pressure of ISO 2533, wind along the heading, the motor's assist share, the
  equation of motion integrated by SciPy's ``solve_ivp``, curve speeds v = √(a·R), the
  hairpin radii the demo's GPX was drawn with, and the battery reserve.

The numbers themselves are never stored here: a change in pacing, rounding or the
demo's riders moves the expectations with them. A plausible wrong change (a factor in
the curve speed or in the hairpin radius, the battery reserve, the drivetrain left out
of the watts column) fails this test.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess

import numpy as np
import pytest
from buildkit import pdf_text
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(shutil.which("pdftotext") is None, reason="needs poppler-utils (pdftotext)"),
]

G0 = 9.80665  # standard gravity [m/s²], exact by definition (CGPM 1901)
R_DRY = 287.05287  # specific gas constant of dry air [J/(kg·K)], ISO 2533
P0, T0, LAPSE, EXPONENT = 101325.0, 288.15, 0.0065, 5.25588  # ISA troposphere, ISO 2533
BEARING_A, BEARING_B = 0.091, 0.0087  # wheel bearings v·(91 + 8.7·v)·1e-3 W: Dahn et al. 1991 via Martin 1998
#: Battery share kept in reserve: common practice, no published source (the README's 20 %)
RESERVE = 0.20
#: Each demo card's text in reading order (pdftotext without -layout), by route file
#: and rider: the cautions print in columns, which -layout interleaves.
READING: dict[tuple[str, str], str] = {}
#: The hairpins of the hill loop as sample_routes/make_routes.py draws them: arcs of
#: 12 m (170°) and 14 m (165°) radius, around km 12.1 and 12.8 (hand-drawn geometry;
#: the GPX adds 0.8 m of noise to every point)
HAIRPINS = ((12080.0, 12.0), (12830.0, 14.0))
#: How far a hairpin's radius read from the noisy GPX may stray from the drawn one:
#: the 0.8 m noise moves a 12 m radius by a few per cent
RADIUS_TOLERANCE = 0.08


# --- the formulas, written out -------------------------------------------------------


def isa_density(elevation, temperature):
    """ρ = p/(R·T), p = p0·(1 − L·h/T0)^5.25588 (ISO 2533) at the given air temperature."""
    pressure = P0 * (1.0 - LAPSE * np.asarray(elevation) / T0) ** EXPONENT
    return pressure / (R_DRY * temperature)


def wheel_power(v, grade, headwind, rho, mass, crr, cda):
    """Power at the wheel [W] to hold ground speed v: Martin, Milliken, Cobb, McFadden &
    Coggan (1998), J. Appl. Biomech. 14:276–291, steady terms (rolling, bearings,
    gravity, air with the wind along the road)."""
    theta = np.arctan(grade)
    air = v + headwind
    return (
        v * mass * G0 * (crr * np.cos(theta) + np.sin(theta))
        + v * (BEARING_A + BEARING_B * v)
        + 0.5 * rho * cda * air * np.abs(air) * v
    )


def taper(v, motor):
    """Assistance left at speed v: 1 below cut-off − taper, 0 at the cut-off
    (Regulation (EU) No 168/2013, Art. 2(2)(h): "progressively reduced")."""
    return min(1.0, max(0.0, (motor.cutoff_speed - v) / motor.taper))


def rider_share(need, efficiency, ratio, peak, assist):
    """The rider's pedal power P with P·E + min(r·P, peak)·taper = need (root by brentq)."""
    if need <= 0:
        return 0.0
    return brentq(lambda p: p * efficiency + min(ratio * p, peak) * assist - need, 0.0, 5000.0, xtol=1e-10)


def down(value, step):
    """To the step below (a limit is never printed higher than it is)."""
    return math.floor(value / step + 1e-9) * step


def nearest(value, step):
    return math.floor(value / step + 0.5) * step


def near_a_boundary(value, step, slack):
    """Whether ``value`` is within ``slack`` of a rounding boundary of ``step``."""
    return abs((value / step) % 1.0 - 0.5) * step < slack


def hm(seconds):
    minutes = int(nearest(seconds / 60, 1))
    return f"{minutes // 60}:{minutes % 60:02d}"


# --- the demo, read back --------------------------------------------------------------


@pytest.fixture(scope="module")
def demo(demo_site):
    """(route config, terrain, plan.json, {rider name: card text}) for every route."""
    from cardgen.io.gpx import read_gpx
    from cardgen.render.html import slugify
    from cardgen.route.terrain import build_terrain

    config, out, _ = demo_site
    routes = []
    for rc in config.routes:
        folder = out / slugify(rc.gpx.stem)
        plan_json = json.loads((folder / "plan.json").read_text(encoding="utf-8"))
        cards = {}
        for plan in plan_json["plans"]:
            (pdf,) = [p for p in folder.glob("*.pdf") if _card_of(p, plan["rider"]["name"])]
            cards[plan["rider"]["name"]] = subprocess.run(
                ["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True, check=True
            ).stdout
            READING[(rc.gpx.name, plan["rider"]["name"])] = pdf_text(pdf)
        routes.append((rc, build_terrain(read_gpx(rc.gpx)), plan_json, cards))
    return config, routes


def _card_of(pdf, name):
    from cardgen.render.html import slugify

    return pdf.stem == slugify(name, set()) or re.fullmatch(
        re.escape(slugify(name, set())) + r"-\d+", pdf.stem
    )


def _rider(config, name):
    (found,) = [r.rider for r in config.riders if r.rider.name == name]
    return found


def _replanned(config, rc, riders):
    """The route's plans for ``riders`` as the build makes them (the whole Plan, ride
    included, where plan.json holds its figures)."""
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import plan_route

    return plan_route(
        read_gpx(rc.gpx),
        riders,
        config.conditions,
        checkpoints=rc.checkpoints,
        stops=rc.stops,
        stop=rc.stop,
    ).plans


def _segments(terrain, start_m, end_m):
    d = terrain.distance
    return slice(int(np.argmin(np.abs(d - start_m))), int(np.argmin(np.abs(d - end_m))))


def _air(conditions, terrain, segs):
    """Headwind [m/s] and air density [kg/m³] on segments: the wind's component against
    each segment's heading, w·cos(from − heading), and the ISA at the segment's middle
    height with the day's temperature (ISA temperature where none is given)."""
    wind = conditions.wind_speed * np.cos(conditions.wind_from - terrain.heading[segs])
    mid = 0.5 * (terrain.elevation[:-1] + terrain.elevation[1:])[segs]
    temperature = conditions.temperature if conditions.temperature is not None else T0 - LAPSE * mid
    return wind, isa_density(mid, temperature)


def _ratio(motor, assist):
    """The assist ratio of a level: a number (0 = off) or its name, "level 2 (100 %)"."""
    if isinstance(assist, int):
        return 0.0 if assist == 0 else motor.levels[assist - 1]
    found = re.match(r"level (\d+)", assist or "")
    return 0.0 if found is None else motor.levels[int(found.group(1)) - 1]


def _motor(rider):
    from cardgen.profiles.motors import find_motor

    return None if rider.vehicle.motor is None else find_motor(rider.vehicle.motor)


CLIMB_ROW = re.compile(
    r"^\s*(\d+)\s+[\d.]+ km\s+[\d.]+ k?m\s+[\d.]+ % / [\d.]+ %\s+(\d+) W\s+([\d.]+) km/h\s+(\d+:\d\d)", re.M
)
DESCENT_ROW = re.compile(r"^\s*(\d+)\s+[\d.]+ km\s+\d+ m\s+-[\d.]+ %\s+([\d.]+) km/h", re.M)


# --- the checks -----------------------------------------------------------------------


def test_watts_for_the_target_speed(demo):
    """The climb table's "W for 10.0 km/h": the mean over the climb's 10 m segments of
    the rider's own pedal power for the target speed, in the day's wind and air, through
    the drivetrain (Martin et al. 1998) and, with a motor, beside the motor's share at
    the level chosen for the climb."""
    config, routes = demo
    checked = 0
    for rc, terrain, plan_json, cards in routes:
        for plan in plan_json["plans"]:
            rider = _rider(config, plan["rider"]["name"])
            vehicle, motor = rider.vehicle, _motor(rider)
            printed = {int(m[0]): int(m[1]) for m in CLIMB_ROW.findall(cards[rider.name])}
            cond = config.conditions
            for climb in plan["climbs"]:
                segs = _segments(terrain, climb["start_m"], climb["end_m"])
                grade = terrain.grade[segs]
                wind, rho = _air(cond, terrain, segs)
                v = plan["rider"]["target_speed_m_s"]
                need = wheel_power(v, grade, wind, rho, vehicle.mass, vehicle.crr, vehicle.cda)
                if motor is None:
                    own = np.maximum(need, 0.0) / vehicle.efficiency
                else:
                    ratio, assist = (
                        _ratio(motor, climb.get("assist_level", climb.get("assist"))),
                        taper(v, motor),
                    )
                    own = [rider_share(n, vehicle.efficiency, ratio, motor.peak_power, assist) for n in need]
                expected = float(np.mean(own))
                assert climb["power_for_target_w"] == pytest.approx(expected, rel=1e-3, abs=0.06), (
                    rc.gpx.name,
                    rider.name,
                    climb["number"],
                )
                if not near_a_boundary(expected, 5.0, 0.06):
                    assert printed[climb["number"]] == nearest(expected, 5.0), (rider.name, climb["number"])
                checked += 1
    # every climb of every plan: the demo's three day-ride riders on 3 climbs and its
    # three hill-loop riders on 1 (sample_routes/site.toml)
    assert checked == _count(routes, "climbs") >= 12


def _count(routes, rows):
    """How many climbs or descents (``rows``) the demo's plans hold, all routes."""
    return sum(len(plan[rows]) for _, _, plan_json, _ in routes for plan in plan_json["plans"])


def _ride_time(vehicle, step, grade, wind, rho, drive, v0):
    """Time [s] over segments of horizontal length ``step`` ridden along their slope
    with the wheel power ``drive`` on each, from speed ``v0``: the equation of motion
    (m + I/r²)·v·dv/ds = P_wheel/v − F(v) (Martin et al. 1998, kinetic term included)
    and dt/ds = 1/v, integrated segment by segment with SciPy's RK45 (the power steps
    at each segment's edge)."""
    inertia = vehicle.mass + vehicle.wheel_inertia_mass

    def motion(s, y, i):
        v = max(y[0], 0.05)
        resist = wheel_power(v, grade[i], wind[i], rho[i], vehicle.mass, vehicle.crr, vehicle.cda)
        return [(drive[i] - resist) / (inertia * v * v), 1.0 / v]

    t, v = 0.0, v0
    for i in range(grade.size):
        length = step * math.sqrt(1.0 + grade[i] ** 2)
        sol = solve_ivp(motion, (0.0, length), [v, t], args=(i,), rtol=1e-8, atol=1e-9)
        v, t = float(sol.y[0, -1]), float(sol.y[1, -1])
    return t


def test_climb_speeds_and_times(demo):
    """Each climb's time integrated again with SciPy (``solve_ivp``, RK45, tight
    tolerances) from the equation of motion (m + I/r²)·v·dv/ds = P_wheel/v − F(v)
    (Martin et al. 1998 with the kinetic term), given the plan's own rider and motor
    power on each 10 m and its speed at the foot; the card's speed is length / time and
    its time the same seconds to the minute."""

    config, routes = demo
    checked = 0
    for rc, terrain, plan_json, cards in routes:
        names = [p["rider"]["name"] for p in plan_json["plans"]]
        riders = [_rider(config, n) for n in names]
        full = _replanned(config, rc, riders)
        cond = config.conditions
        for plan, rider, ridden in zip(plan_json["plans"], riders, full, strict=True):
            vehicle = rider.vehicle
            ride = ridden.ride
            rows = {int(m[0]): (float(m[2]), m[3]) for m in CLIMB_ROW.findall(cards[rider.name])}
            for climb in plan["climbs"]:
                segs = _segments(terrain, climb["start_m"], climb["end_m"])
                if np.any(ride.limited[segs]) or not np.all(np.isfinite(ride.time[segs])):
                    continue  # a speed limit or a stall on the climb: not a free ride to integrate
                grade = terrain.grade[segs]
                wind, rho = _air(cond, terrain, segs)
                rider_w = ride.rider_power[segs]
                drive = np.where(rider_w > 0, rider_w * vehicle.efficiency, rider_w) + ride.motor_power[segs]
                t = _ride_time(vehicle, terrain.step, grade, wind, rho, drive, float(ride.speed[segs.start]))
                assert climb["time_s"] == pytest.approx(t, rel=5e-3), (
                    rc.gpx.name,
                    rider.name,
                    climb["number"],
                )
                length = climb["end_m"] - climb["start_m"]
                assert climb["speed_m_s"] == pytest.approx(length / climb["time_s"], rel=2e-3)
                speed_kmh, time = rows[climb["number"]]
                if not near_a_boundary(length / t * 3.6, 0.5, 0.02):
                    assert speed_kmh == nearest(length / t * 3.6, 0.5), (rider.name, climb["number"])
                if not near_a_boundary(t / 60, 1.0, 0.02):
                    assert time == hm(t), (rider.name, climb["number"])
                checked += 1
    assert checked == _count(routes, "climbs") >= 12


def test_coasting_speeds_on_descents(demo):
    """A descent's coasting speed: the ground speed where, with no pedalling, gravity
    on the descent's average grade balances rolling, bearings and air in its mean wind
    and air density (Martin et al. 1998; root by brentq)."""
    config, routes = demo
    cond = config.conditions
    checked = 0
    for _, terrain, plan_json, cards in routes:
        for plan in plan_json["plans"]:
            vehicle = _rider(config, plan["rider"]["name"]).vehicle
            printed = {int(m[0]): float(m[1]) for m in DESCENT_ROW.findall(cards[plan["rider"]["name"]])}
            for descent in plan["descents"]:
                segs = _segments(terrain, descent["start_m"], descent["end_m"])
                wind, rho = (float(np.mean(x)) for x in _air(cond, terrain, segs))
                grade = descent["avg_grade"]
                v = brentq(
                    lambda v, g=grade, w=wind, r=rho, veh=vehicle: wheel_power(
                        v, g, w, r, veh.mass, veh.crr, veh.cda
                    ),
                    0.1,
                    60.0,
                    xtol=1e-10,
                )
                assert descent["coast_speed_m_s"] == pytest.approx(v, rel=2e-3, abs=2e-3)
                if not near_a_boundary(v * 3.6, 0.5, 0.02):
                    assert printed[descent["number"]] == nearest(v * 3.6, 0.5)
                checked += 1
    # the day ride's two descents for its three riders, the hill loop's one for its three
    assert checked == _count(routes, "descents") >= 9


def _curves(plan):
    everywhere = [*plan["warnings"]]
    for row in (*plan["climbs"], *plan["descents"]):
        everywhere.extend(row["warnings"])
    return [w for w in everywhere if w["code"] == "curve"]


def _slow_to(warning):
    """The curve's speed [m/s] in plan.json (``slow_to_m_s``; ``safe_speed_m_s`` before
    it was renamed)."""
    return warning.get("slow_to_m_s", warning.get("safe_speed_m_s"))


def test_curve_slow_to_speeds(demo):
    """Every curve's "slow to" speed is v = √(a·R) (FHWA-HRT-04-103, 2004; AASHTO 1999),
    a the vehicle's lateral acceleration and R the route's curve radius where the
    warning stands, printed rounded down to 0.5 km/h: in plan.json (never above v), in
    the warning's words and on the card."""
    config, routes = demo
    checked = 0
    for rc, terrain, plan_json, cards in routes:
        for plan in plan_json["plans"]:
            vehicle = _rider(config, plan["rider"]["name"]).vehicle
            card = " ".join(cards[plan["rider"]["name"]].split())
            allowed = set()
            for curve in _curves(plan):
                radius = float(terrain.curve_radius[int(np.argmin(np.abs(terrain.distance - curve["at_m"])))])
                assert radius - 10.0 <= curve["radius_m"] <= radius + 0.05  # as is, or rounded down
                v = math.sqrt(vehicle.curve_accel * radius)
                kmh = down(v * 3.6, 0.5)
                # plan.json holds v, or the printed figure: between the two, never above v
                assert kmh - 0.01 <= _slow_to(curve) * 3.6 <= v * 3.6 + 0.01, (rc.gpx.name, curve["at_m"])
                if not near_a_boundary(v * 3.6 + 0.25, 0.5, 0.02):  # a boundary of rounding down
                    assert f"slow to {kmh:.1f} km/h" in curve["text"], (curve["text"], kmh)
                    allowed.add(kmh)
                else:
                    allowed |= {kmh, kmh - 0.5}
                checked += 1
            # the card names the tightest curves (condensed notes may leave out gentler
            # ones): every speed it prints is one of these, and the slowest among them
            printed = {float(x) for x in re.findall(r"slow to ([\d.]+) km/h", card)}
            assert printed <= allowed, (rc.gpx.name, plan["rider"]["name"], printed, allowed)
            if allowed:
                assert min(printed) <= min(allowed) + 0.5, (rc.gpx.name, plan["rider"]["name"])
    assert checked >= 30


def test_the_hill_loops_hairpins_have_their_drawn_radius(demo):
    """The two hairpins of the hill loop were drawn as 12 m and 14 m arcs
    (sample_routes/make_routes.py); the curve warnings near them give those radii
    within the GPS noise, and the slow-to speed follows from them."""
    config, routes = demo
    (hill,) = [r for r in routes if r[0].gpx.stem == "hill-loop"]
    _, _, plan_json, _ = hill
    found = 0
    for plan in plan_json["plans"]:
        for where, radius in HAIRPINS:
            near = [c for c in _curves(plan) if abs(c["at_m"] - where) < 100]
            if not near:
                continue
            (curve,) = near
            # never wider than drawn by more than the noise allows (a wider radius asks for
            # more speed); tighter by the noise and the rounding down to 1 m at most
            low, high = (1 - RADIUS_TOLERANCE) * radius - 1.0, (1 + RADIUS_TOLERANCE) * radius
            assert low <= curve["radius_m"] <= high, (plan["rider"]["name"], where)
            found += 1
    assert found >= 2 * len(plan_json["plans"]) - 1 >= 5  # both hairpins for (nearly) every rider


def _rounded(printed, value):
    """Whether ``printed`` is ``value`` on the card's battery step (1 Wh), rounded down,
    to the nearest or up."""
    step = 1.0
    return printed % step == 0 and abs(printed - value) < step + 1e-6


def test_battery_figures(demo):
    """Battery: the card's "battery about N Wh" is plan.json's energy to its rounding
    step (1 Wh; up or to the nearest), the usable energy never
    above nominal × usable share (a limit, rounded down); the plan
    fits exactly when it uses at most (1 − 20 %) of the usable battery (nominal ×
    usable share); a plan that does not fit says so on the card with the 20 % reserve;
    the energy left after each climb is the usable energy less what the motor drew."""
    config, routes = demo
    checked = 0
    for rc, _, plan_json, cards in routes:
        for plan in plan_json["plans"]:
            rider = _rider(config, plan["rider"]["name"])
            motor = _motor(rider)
            totals = plan["totals"]
            card = " ".join(cards[rider.name].split())
            if motor is None:
                assert totals["battery_j"] is None and "battery about" not in card
                continue
            nominal = rider.vehicle.battery if rider.vehicle.battery is not None else motor.battery
            usable = nominal * motor.usable_share
            wh = totals["battery_j"] / 3600
            (printed,) = {float(x) for x in re.findall(r"battery about (\d+) Wh", card)}
            assert _rounded(printed, wh), (rc.gpx.name, rider.name, printed, wh)
            # the range line's reserve, the plan's share kept back
            reading = READING[(rc.gpx.name, rider.name)]  # the cautions print in columns
            ((kept, share),) = re.findall(r"Range: keeps at least (\d+) Wh \((\d+) %\)", reading)
            assert float(share) == RESERVE * 100
            # what may be used, 80 % of the usable battery rounded down; what is kept,
            # the rest of the usable figure page 1 prints (rounded down): they add up
            spend = math.floor((1 - RESERVE) * usable / 3600 + 1e-9)
            (of,) = {float(x) for x in re.findall(r"Wh of (\d+) Wh usable", card)}
            assert _rounded(of, usable / 3600) and of <= usable / 3600 + 1e-6
            assert spend + float(kept) == of
            assert printed + float(kept) <= of
            assert _rounded(float(kept), RESERVE * usable / 3600)
            fits = totals["battery_j"] <= (1 - RESERVE) * usable
            assert totals["battery_fits"] is fits, (rc.gpx.name, rider.name)
            warned = [w for w in plan["warnings"] if w["code"] == "battery"]
            assert bool(warned) is not fits
            for w in warned:
                assert f"{RESERVE * 100:.0f}% reserve" in w["text"].replace(" %", "%")
                (said,) = re.findall(r"of the (\d+) Wh usable", w["text"])
                assert _rounded(float(said), usable / 3600) and float(said) <= usable / 3600 + 1e-6
                assert f"reserve near {w['at_m'] / 1000:.1f} km" in card
                # the reserve is reached after every climb that ends with more than it left
                for climb in plan["climbs"]:
                    if climb["battery_left_j"] > RESERVE * usable:
                        assert w["at_m"] > climb["end_m"]
                    else:
                        assert w["at_m"] <= climb["end_m"]
            lefts = [c["battery_left_j"] for c in plan["climbs"]]
            assert all(a >= b for a, b in zip(lefts, lefts[1:], strict=False))
            assert all(left <= usable for left in lefts)
            checked += 1
    # the demo's two e-assist riders, both on the hill loop (sample_routes/site.toml)
    assert checked >= 2


# --- moving time, food, fluids, battery ------------------------------------------------

#: Carbohydrate guide [g/h] by the whole outing's duration [h] (Thomas, Erdman & Burke
#: 2016, Med Sci Sports Exerc 48(3):543–568, Table 4 [S]): under 45 min none; up to
#: 75 min small amounts (cardgen's 0–30 g/h); 1–2.5 h 30–60 g/h; longer, up to 90 g/h
#: (cardgen's 60–90 g/h)
CARB_GUIDE = ((0.75, 0.0, 0.0), (1.25, 0.0, 30.0), (2.5, 30.0, 60.0), (math.inf, 60.0, 90.0))
#: Fluid [L/h] at 13 °C, the demo's air: the low third of the 0.4–0.8 L/h starting
#: point of Sawka et al. (2007), ACSM position stand [M]; the split by temperature is
#: common practice, no published source
FLUID_AT_13C = (0.4, 0.6)
J_PER_KCAL = 4184.0  # thermochemical calorie (ISO 80000-5)
#: A motor's thermal filter: the first-order time constant within which its output
#: may average its continuous rating (common practice, no published source: the README)
THERMAL_TAU = 600.0


def _free_ride_times(vehicle, terrain, cond, ride, ends):
    """Elapsed time [s] at each distance of ``ends`` (ascending, within the route):
    the equation of motion of :func:`_ride_time` integrated in one ``solve_ivp`` call
    per stretch the plan rides freely, with the plan's own rider and motor power on
    each 10 m and its speed at the stretch's start; across segments where a speed limit
    holds the plan's speed down (braking for a curve, a turn or the cap: ``limited``)
    the plan's own times are taken as they are. Returns the times and the share of
    the total taken from the plan."""
    d = terrain.distance
    inertia = vehicle.mass + vehicle.wheel_inertia_mass
    rider_w = ride.rider_power
    drive = np.where(rider_w > 0, rider_w * vehicle.efficiency, rider_w) + ride.motor_power
    n = terrain.grade.size
    wind, rho = _air(cond, terrain, slice(0, n))
    node_t = np.zeros(n + 1)  # the test's own elapsed time at each node it passes
    taken = 0.0
    i = 0
    while i < n:
        j = i
        while j < n and ride.limited[j] == ride.limited[i]:
            j += 1
        if ride.limited[i]:
            node_t[i + 1 : j + 1] = node_t[i] + np.cumsum(ride.time[i:j])
            taken += float(np.sum(ride.time[i:j]))
        else:
            grade = terrain.grade[i:j]
            edges = np.concatenate(([0.0], np.cumsum(terrain.step * np.sqrt(1.0 + grade**2))))

            def motion(s, y, i=i, j=j, edges=edges):
                k = i + min(int(np.searchsorted(edges, s, "right")) - 1, j - i - 1)
                v = max(y[0], 0.05)
                resist = wheel_power(
                    v, terrain.grade[k], wind[k], rho[k], vehicle.mass, vehicle.crr, vehicle.cda
                )
                return [(drive[k] - resist) / (inertia * v * v), 1.0 / v]

            sol = solve_ivp(
                motion,
                (0.0, edges[-1]),
                [float(ride.speed[i]), 0.0],
                t_eval=edges,
                rtol=1e-7,
                atol=1e-8,
                max_step=terrain.step,
            )
            node_t[i + 1 : j + 1] = node_t[i] + sol.y[1, 1:]
        i = j
    return [float(np.interp(e, d, node_t)) for e in ends], taken / node_t[-1]


def test_moving_time_food_and_fluids(demo):
    """Every card's moving time and each food leg's riding time, energy, carbohydrate
    and fluid: the times from the equation of motion integrated with SciPy's
    ``solve_ivp`` (Martin et al. 1998, kinetic term included) at the plan's own power;
    food energy = rider's work / gross efficiency (the definition of gross efficiency,
    Gaesser & Brooks 1975 [M]), the vehicle's efficiency an input; carbohydrate and
    fluid = the guides above × the leg's riding hours, each end of the carbohydrate
    range to the nearest gram (half up), fluid low end down and high end up to 0.1 L."""

    config, routes = demo
    cond = config.conditions
    checked = 0
    for rc, terrain, plan_json, cards in routes:
        riders = [_rider(config, p["rider"]["name"]) for p in plan_json["plans"]]
        full = _replanned(config, rc, riders)
        for plan, rider, ridden in zip(plan_json["plans"], riders, full, strict=True):
            vehicle, ride = rider.vehicle, ridden.ride
            card = cards[rider.name]
            ends = [leg["end_m"] for leg in plan["legs"]]
            times, taken = _free_ride_times(vehicle, terrain, cond, ride, ends)
            assert taken < 0.10  # braking stretches: 5 % of the cargo bike's hill loop (its 35 km/h cap)
            assert plan["totals"]["time_s"] == pytest.approx(times[-1], rel=2e-3), (rc.gpx.name, rider.name)
            if not near_a_boundary(times[-1] / 60, 1.0, 0.05):
                assert f"moving time {hm(times[-1])}" in card, (rider.name, hm(times[-1]))
            # the day's food energy on page 1, all the vehicle's riders together
            total = (
                float(np.sum(np.maximum(ride.rider_power, 0.0) * ride.time))
                / vehicle.gross_efficiency
                / J_PER_KCAL
            )
            if not near_a_boundary(total, 10.0, 0.5):
                said = f"energy spent riding about {nearest(total, 10.0):,.0f} kcal"
                assert said in " ".join(card.split()), (rider.name, said)
            # the food table: one row per leg, in order
            rows = re.findall(
                r"\((\d+\.\d) km\)\s+(\d+:\d\d)\s+([\d,]+) kcal\s+(\d+)–(\d+) g\s+(\d\.\d)–(\d\.\d) L", card
            )
            assert len(rows) == len(plan["legs"]), (rider.name, rows)
            out_h = _time_out(plan, times[-1])
            low, high = next((lo, hi) for limit, lo, hi in CARB_GUIDE if out_h <= limit)
            work = np.concatenate(([0.0], np.cumsum(np.maximum(ride.rider_power, 0.0) * ride.time)))
            start_t, start_w = 0.0, 0.0
            for leg, end_t, row in zip(plan["legs"], times, rows, strict=True):
                hours = (end_t - start_t) / 3600
                end_w = float(np.interp(leg["end_m"], terrain.distance, work))
                kcal = (end_w - start_w) / vehicle.gross_efficiency / J_PER_KCAL
                start_t, start_w = end_t, end_w
                if not near_a_boundary(hours * 60, 1.0, 0.05):
                    assert row[1] == hm(hours * 3600), (rider.name, leg["to"])
                if not near_a_boundary(kcal, 10.0, 0.5):
                    assert int(row[2].replace(",", "")) == nearest(kcal, 10.0), (rider.name, leg["to"])
                for printed, rate in ((row[3], low), (row[4], high)):
                    if not near_a_boundary(rate * hours, 1.0, 0.05):
                        assert int(printed) == nearest(rate * hours, 1.0), (rider.name, leg["to"])
                for printed, rate, rounding in (
                    (row[5], FLUID_AT_13C[0], down),
                    (row[6], FLUID_AT_13C[1], None),
                ):
                    litres = rate * hours
                    expected = rounding(litres, 0.1) if rounding else math.ceil(litres / 0.1 - 1e-9) * 0.1
                    if abs(litres / 0.1 - round(litres / 0.1)) > 0.01:
                        assert float(printed) == pytest.approx(expected), (rider.name, leg["to"])
                checked += 1
    assert checked >= 13  # the day ride's 5 legs for 3 riders, one or two legs elsewhere


def _time_out(plan, moving_s):
    """The whole outing [h]: moving time and every planned stop (plan.json's checkpoints)."""
    stops = sum(c.get("stop_s", 0.0) for c in plan.get("checkpoints", []))
    return (moving_s + stops) / 3600


def test_battery_use(demo):
    """Each e-assist card's "battery about N Wh": the motor's power at the wheel worked
    out again on every 10 m from the plan's own rider power and speed, the assist ratio
    of the level each climb row and the plan between climbs name, the taper to zero
    at the cut-off (Regulation (EU) No 168/2013, Art. 2(2)(h)), the peak power and the
    continuous rating held by a first-order filter of the output (``THERMAL_TAU``,
    marched segment by segment); battery = ∫ motor power dt / drive efficiency,
    rounded up to 1 Wh (a need)."""

    config, routes = demo
    checked = 0
    for rc, terrain, plan_json, cards in routes:
        riders = [_rider(config, p["rider"]["name"]) for p in plan_json["plans"]]
        if all(_motor(r) is None for r in riders):
            continue
        full = _replanned(config, rc, riders)
        for plan, rider, ridden in zip(plan_json["plans"], riders, full, strict=True):
            motor = _motor(rider)
            if motor is None or ridden.assist_off_at is not None:
                continue  # a switch-off part way is not worked out here
            ride = ridden.ride
            ratio = np.full(terrain.grade.size, _ratio(motor, plan["totals"]["assist_between_level"]))
            for climb in plan["climbs"]:
                ratio[_segments(terrain, climb["start_m"], climb["end_m"])] = _ratio(
                    motor, climb.get("assist_level", climb.get("assist"))
                )
            taper_share = np.clip((motor.cutoff_speed - ride.mean_speed) / motor.taper, 0.0, 1.0)
            asked = np.minimum(ratio * np.maximum(ride.rider_power, 0.0), motor.peak_power) * taper_share
            filtered, energy = 0.0, 0.0
            for want, dt in zip(asked, ride.time, strict=True):
                keep = math.exp(-dt / THERMAL_TAU)
                given = min(want, max(motor.rated_power, (motor.rated_power - filtered * keep) / (1 - keep)))
                filtered = filtered * keep + given * (1 - keep)
                energy += given * dt
            wh = energy / motor.drive_efficiency / 3600
            assert plan["totals"]["battery_j"] / 3600 == pytest.approx(wh, rel=2e-3), (
                rc.gpx.name,
                rider.name,
            )
            card = " ".join(cards[rider.name].split())
            if abs(wh - round(wh)) > 0.05:
                assert f"battery about {math.ceil(wh):.0f} Wh" in card, (rider.name, wh)
            checked += 1
    assert checked >= 2  # the hill loop's two e-assist riders


def test_cards_and_coach_sheets_say_the_weather_they_assume(demo_site):
    """The demo's [conditions] (sample_routes/site.toml: wind 12 km/h from 240°, 13 °C),
    worked into words by hand: 240° is within 11.25° of west-south-west (247.5°)."""
    _, out, _ = demo_site
    said = "figures assume wind 12.0 km/h from WSW (240°), 13 °C"
    sheets = sorted(p for p in out.glob("*/*.pdf") if not p.stem.startswith("all-cards"))
    assert len(sheets) >= 9 + 4  # the 9 cards and 4 coach sheets
    for pdf in sheets:
        text = subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
        assert said in " ".join(text.split()), pdf.name


def test_the_fluid_guide_says_whose_range_it_splits(demo):
    """The fluid band by temperature is cardgen's own split (common practice, no
    published source); the stand's range is 0.4–0.8 L an hour (Sawka et al. 2007 [M]).
    The card said "0.4–0.6 L an hour at the day's temperature (ACSM, 2007)", which
    put cardgen's band in the stand's name."""
    _, routes = demo
    for _, _, _, cards in routes:
        for name, text in cards.items():
            words = " ".join(text.split())
            assert "0.4–0.6 L an hour: our temperature band of ACSM's 0.4–0.8 L (2007)" in words, name
