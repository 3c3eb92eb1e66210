"""Route × rider (vehicle and effort) × conditions → Plan.

A plan holds every number a card, a page or the command line shows, as frozen data
in SI units; :func:`plan_dict` and :func:`route_json` turn it into JSON-ready
dictionaries with units in the key names. It knows nothing of GPX or HTML.

How a rider rides (the effort model): the flat power everywhere, the climbing power
on climbs (capped at a share above CP), and no pedalling where gravity alone keeps
the rider at least as fast as their flat speed on level ground. The ride is
simulated with inertia, wind on every segment, air density by altitude, and the
vehicle's descent and curve speed limits, braking at :data:`BRAKING` before them.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

import numpy as np

from cardgen.physics.assist import Motor, battery_energy, find_motor, motor_power, taper_factor
from cardgen.physics.atmosphere import air_density_isa
from cardgen.physics.forces import G0, gravity_power, headwind
from cardgen.physics.ride import Ride, simulate, w_prime_balance_skiba
from cardgen.physics.steady import power_for_speed, speed_for_power
from cardgen.route.climbs import Hill, find_climbs, find_descents
from cardgen.route.cues import Cue, cue_sheet
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain
from cardgen.units import J_PER_KCAL
from cardgen.vehicles import Rider

#: Steepest 100 m grade that earns a "steep" note [-]: common practice, no published
#: source (AASHTO's bicycle guide calls grades over 5 % undesirable on shared paths).
STEEP_GRADE = 0.10
#: Braking deceleration before a speed limit [m/s²]: f = 0.25 of the AASHTO Guide
#: for the Development of Bicycle Facilities (1999) stopping-sight-distance formula
#: (wet pavement, ordinary brakes) [S].
BRAKING = 0.25 * G0
#: Battery share kept in reserve when judging whether a route fits: common practice,
#: no published source.
BATTERY_RESERVE = 0.20


@dataclass(frozen=True)
class Conditions:
    """Weather: ``wind_speed`` [m/s], ``wind_from`` [rad] clockwise from north (where
    the wind comes from), ``temperature`` [K] or None for the ISA temperature."""

    wind_speed: float = 0.0
    wind_from: float = 0.0
    temperature: float | None = None


@dataclass(frozen=True)
class Warning:
    """``code`` (stable, for symbols), ``severity`` ("info", "caution", "warning") and
    a plain sentence: ``template`` with named quantities in SI, ``values`` as
    (name, kind, value) where kind is a filter of :mod:`cardgen.render.format`
    ("speed", "length", "distance", "power", "grade", "battery"). :meth:`render` writes
    it in metric or imperial units; :attr:`text` is metric."""

    code: str
    severity: str
    template: str
    values: tuple = ()

    def render(self, units: str = "metric") -> str:
        from cardgen.render import format as fmt

        with_units = {"speed", "length", "distance", "height"}
        words = {name: getattr(fmt, kind)(value, units) if kind in with_units else getattr(fmt, kind)(value)
                 for name, kind, value in self.values}
        return self.template.format(**words)

    @property
    def text(self) -> str:
        return self.render("metric")


@dataclass(frozen=True)
class ClimbRow:
    number: int
    hill: Hill
    power_for_target: float  # [W] rider's power to hold the target speed (with the suggested assist)
    speed_at_effort: float  # [m/s] average simulated speed
    time: float  # [s] simulated
    min_speed: float  # [m/s] slowest segment
    slow_length: float  # [m] below the two-wheel stable speed
    rider_power: float  # [W] time-averaged simulated rider power on the climb
    w_prime_low: float  # [J] lowest W′ balance on the climb
    safe_power: float | None  # [W] highest steady power that keeps W′ ≥ 0, where it runs out
    assist_level: int | None  # suggested level (0 = off); None without a motor
    assist_name: str | None
    warnings: tuple[Warning, ...]


@dataclass(frozen=True)
class DescentRow:
    number: int
    hill: Hill
    coast_speed: float  # [m/s] steady coasting speed on the average grade
    max_speed: float  # [m/s] fastest simulated speed (after braking for limits)
    gravity_power: float  # [W] at the coasting speed; negative: gravity drives
    braking_energy: float  # [J] taken out by the brakes on the descent
    curve_distance: float  # [m] where the tightest curve is
    curve_speed: float  # [m/s] lateral-acceleration limit there (inf on a straight)
    warnings: tuple[Warning, ...]


@dataclass(frozen=True)
class TimedCue:
    cue: Cue
    elapsed: float  # [s] from the start


@dataclass(frozen=True)
class Totals:
    time: float  # [s] moving
    energy: float  # [J] rider's mechanical work
    food_energy: float  # [J] metabolic, at the vehicle's gross efficiency
    battery: float | None  # [J] drawn from the battery; None without a motor
    battery_fits: bool | None  # within the usable capacity less the reserve
    walk_length: float  # [m] two-wheeler below its stable speed


@dataclass(frozen=True)
class Plan:
    track: Track
    terrain: Terrain
    rider: Rider
    conditions: Conditions
    motor: Motor | None
    ride: Ride
    w_prime_balance: np.ndarray  # [J] per segment
    climbs: tuple[ClimbRow, ...]
    descents: tuple[DescentRow, ...]
    cues: tuple[TimedCue, ...]
    totals: Totals
    warnings: tuple[Warning, ...]


@dataclass(frozen=True)
class Analysis:
    """What a route is, whoever rides it: climbs, descents and cues."""

    track: Track
    terrain: Terrain
    climbs: tuple[Hill, ...]
    descents: tuple[Hill, ...]
    cues: tuple[Cue, ...]
    warnings: tuple[str, ...]


def analyse(track: Track, terrain: Terrain) -> Analysis:
    """Climbs, descents and the cue sheet of a route (done once, shared by riders)."""
    cues, warnings = cue_sheet(terrain, track)
    return Analysis(track, terrain, tuple(find_climbs(terrain)), tuple(find_descents(terrain)),
                    tuple(cues), (*track.warnings, *warnings))


def _segment_air(terrain: Terrain, conditions: Conditions):
    """Headwind [m/s] and air density [kg/m³] on every segment."""
    wind = headwind(terrain.heading, conditions.wind_speed, conditions.wind_from)
    mid = 0.5 * (terrain.elevation[1:] + terrain.elevation[:-1])
    rho = air_density_isa(np.clip(mid, -1000.0, 9000.0), conditions.temperature)
    return np.asarray(wind, dtype=float), np.asarray(rho, dtype=float)


def _physics(rider: Rider, grade, wind, rho, efficiency=None) -> dict:
    v = rider.vehicle
    return dict(mass=v.mass, crr=v.crr, cda=v.cda,
                efficiency=v.efficiency if efficiency is None else efficiency,
                grade=grade, headwind=wind, air_density=rho)


def speed_caps(terrain: Terrain, rider: Rider):
    """Speed limit at every node [m/s]: the vehicle's descent cap and v = √(a·R) in
    curves (a the vehicle's lateral acceleration; FHWA-HRT-04-103, 2004)."""
    v = rider.vehicle
    return np.minimum(v.max_descent_speed, np.sqrt(v.curve_accel * terrain.curve_radius))


def rider_powers(terrain: Terrain, rider: Rider, climbs, wind, rho):
    """The effort model: rider power [W] on every segment (see the module notes)."""
    power = np.full(terrain.grade.size, rider.flat_power)
    for hill in climbs:
        power[hill.start:hill.end] = rider.climb_power_used
    flat_speed = speed_for_power(rider.flat_power, **_physics(rider, 0.0, 0.0, 1.2))
    # Coasting is at least as fast as the flat speed exactly where, at that speed,
    # gravity (and wind) already cover every loss: no solve needed.
    coasts = power_for_speed(flat_speed, **_physics(rider, terrain.grade, wind, rho, efficiency=1.0)) <= 0
    power[coasts] = 0.0
    return power


def _assisted_speed(rider, motor, ratio, rider_power, phys):
    """Steady speed with rider power and assist at ``ratio`` (two fixed-point rounds
    for the speed-dependent cut-off)."""
    wheel = np.where(rider_power > 0, rider_power * rider.vehicle.efficiency, rider_power)
    boost = np.minimum(ratio * np.maximum(rider_power, 0.0), motor.peak_power)
    speed = speed_for_power(wheel + boost, **{**phys, "efficiency": 1.0}, rtol=1e-6)
    for _ in range(2):
        slower = taper_factor(speed, motor.cutoff_speed, motor.taper) < 1
        if not slower.any():  # all below the taper: the first answer stands
            break
        speed = speed_for_power(wheel + boost * taper_factor(speed, motor.cutoff_speed, motor.taper),
                                **{**phys, "efficiency": 1.0}, rtol=1e-6)
    return speed


def rider_power_for_speed(rider: Rider, motor: Motor | None, ratio: float, speed, phys):
    """Rider's pedal power [W] to hold ``speed`` with assist at ``ratio`` (0 = none)."""
    need = power_for_speed(speed, **{**phys, "efficiency": 1.0})  # at the wheel
    eff = rider.vehicle.efficiency
    if motor is None:
        return np.where(need > 0, need / eff, 0.0)
    f = taper_factor(speed, motor.cutoff_speed, motor.taper)
    p = need / (eff + ratio * f)
    over_peak = ratio * p > motor.peak_power
    p = np.where(over_peak, (need - motor.peak_power * f) / eff, p)
    return np.maximum(p, 0.0)


def suggest_levels(rider: Rider, motor: Motor, hills, terrain: Terrain, wind, rho):
    """For each climb, the lowest assist level (0 = off) at which the rider, at no
    more than their climbing power, stays at or above the vehicle's stable speed on
    every segment. The rider eases off once the target speed is reached.

    Returns a list, one (level, slowest speed [m/s] at each level 0…N) per climb; where
    no level is enough, the highest level. All climbs and levels are solved at once.
    """
    if not hills:
        return []
    segments = [np.arange(h.start, h.end) for h in hills]
    idx = np.concatenate(segments)
    starts = np.cumsum([0] + [len(x) for x in segments[:-1]])
    phys = _physics(rider, terrain.grade[idx], wind[idx], rho[idx])
    ratios = np.array([0.0, *motor.levels])[:, None]  # (levels, 1) against (segments,)
    wanted = rider_power_for_speed(rider, motor, ratios, rider.target_speed, phys)
    power = np.minimum(wanted, rider.climb_power_used)
    speed = np.minimum(_assisted_speed(rider, motor, ratios, power, phys), rider.target_speed)
    slowest = np.minimum.reduceat(speed, starts, axis=1)  # (levels, climbs)
    enough = slowest >= rider.vehicle.min_stable_speed
    out = []
    for k in range(len(hills)):
        level = int(np.argmax(enough[:, k])) if enough[:, k].any() else len(motor.levels)
        out.append((level, slowest[:, k].tolist()))
    return out


def safe_climb_power(rider: Rider, hill: Hill, terrain: Terrain, wind, rho, w_prime_left: float):
    """Highest steady power [W] whose work above CP over the climb, (P − CP)·T(P),
    fits the W′ left at its foot. Recovery during the climb is ignored, which errs on
    the safe side (Skiba et al. 2012 model otherwise)."""
    segs = slice(hill.start, hill.end)
    phys = _physics(rider, terrain.grade[segs], wind[segs], rho[segs])
    candidates = np.linspace(rider.cp, max(rider.cp, rider.climb_power_used), 41)
    length = terrain.step * np.sqrt(1.0 + terrain.grade[segs] ** 2)  # along the slope
    t = np.sum(length / speed_for_power(candidates[:, None], **phys), axis=1)
    fits = (candidates - rider.cp) * t <= max(w_prime_left, 0.0)
    if w_prime_left <= 0:
        return None
    return float(candidates[fits].max())


def make_plan(route: Analysis | Track, terrain: Terrain | None = None, rider: Rider | None = None,
              conditions: Conditions | None = None) -> Plan:
    """Work out the plan of one rider on one route (still air and the standard
    atmosphere when ``conditions`` is None).

    ``route`` is an :class:`Analysis` (from :func:`analyse`, shared by several riders),
    or a Track followed by its Terrain.
    """
    if not isinstance(route, Analysis):
        route = analyse(route, terrain)
    track, terrain = route.track, route.terrain
    conditions = conditions or Conditions()
    vehicle = rider.vehicle
    wind, rho = _segment_air(terrain, conditions)
    hills = route.climbs
    motor = find_motor(vehicle.motor) if vehicle.motor else None

    levels = {}
    ratio = np.zeros(terrain.grade.size)
    if motor is not None:
        ratio[:] = 0.0 if rider.cruise_level == 0 else motor.levels[rider.cruise_level - 1]
        for hill, (level, _) in zip(hills, suggest_levels(rider, motor, hills, terrain, wind, rho), strict=True):
            levels[hill.start] = level
            ratio[hill.start:hill.end] = 0.0 if level == 0 else motor.levels[level - 1]

    power = rider_powers(terrain, rider, hills, wind, rho)
    drive = None if motor is None else (lambda v, p: motor_power(motor, ratio, v, p))
    ride = simulate(
        step=terrain.step, grade=terrain.grade, headwind=wind, air_density=rho, mass=vehicle.mass,
        crr=vehicle.crr, cda=vehicle.cda, efficiency=vehicle.efficiency,
        wheel_inertia_mass=vehicle.wheel_inertia_mass, rider_power=power,
        speed_cap=speed_caps(terrain, rider), distance=terrain.distance, deceleration=BRAKING,
        motor=drive,
    )
    wbal = w_prime_balance_skiba(ride.rider_power, ride.time, rider.cp, rider.w_prime)

    climbs = tuple(_climb_row(i + 1, h, terrain, rider, motor, levels.get(h.start), ride, wbal, wind, rho)
                   for i, h in enumerate(hills))
    descents = _descent_rows(route.descents, terrain, rider, ride, wind, rho)
    timed = tuple(TimedCue(c, float(np.interp(c.distance, terrain.distance, ride.elapsed))) for c in route.cues)

    energy = float(np.sum(np.maximum(ride.rider_power, 0.0) * ride.time))
    slow = (ride.mean_speed < vehicle.min_stable_speed) & (ride.rider_power > 0)
    battery = fits = None
    warnings = [Warning("track", "info", w.replace("{", "{{").replace("}", "}}")) for w in route.warnings]
    if motor is not None:
        battery = battery_energy(motor, ride.motor_power, ride.time)
        fits = battery <= motor.usable_battery * (1.0 - BATTERY_RESERVE)
        if not fits:
            warnings.append(Warning(
                "battery", "warning",
                "the assist would use about {used} of the {usable} usable: more than leaves a "
                f"{BATTERY_RESERVE:.0%} reserve; use lower levels or carry a spare",
                (("used", "battery", battery), ("usable", "battery", motor.usable_battery)),
            ))
    totals = Totals(time=float(ride.elapsed[-1]), energy=energy, food_energy=energy / vehicle.gross_efficiency,
                    battery=battery, battery_fits=fits, walk_length=float(np.sum(slow) * terrain.step))
    return Plan(track, terrain, rider, conditions, motor, ride, wbal, climbs, descents, timed, totals,
                tuple(warnings))


def _climb_row(number, hill, terrain, rider, motor, level, ride, wbal, wind, rho) -> ClimbRow:
    vehicle = rider.vehicle
    segs = slice(hill.start, hill.end)
    phys = _physics(rider, terrain.grade[segs], wind[segs], rho[segs])
    ratio = 0.0 if not level else motor.levels[level - 1]
    need = rider_power_for_speed(rider, motor, ratio, rider.target_speed, phys)
    time = float(np.sum(ride.time[segs]))
    speeds = ride.mean_speed[segs]
    slow = float(np.sum(speeds < vehicle.min_stable_speed) * terrain.step)
    rider_power = float(np.sum(ride.rider_power[segs] * ride.time[segs]) / time)
    w_low = float(np.min(wbal[segs]))
    before = float(wbal[hill.start - 1]) if hill.start > 0 else rider.w_prime
    warnings = []
    safe = None
    if w_low < 0:
        safe = safe_climb_power(rider, hill, terrain, wind, rho, before)
        advice = "hold about {safe} instead" if safe is not None else "ease off before the climb to recover"
        values = (("power", "power", rider_power),) + ((("safe", "power", safe),) if safe is not None else ())
        warnings.append(Warning(
            "w-prime", "warning",
            "at {power} the rider runs out of anaerobic reserve (W′) on this climb; " + advice, values,
        ))
    if slow > 0:
        warnings.append(Warning(
            "walk", "warning",
            "below {speed} for about {length}: hard to balance on two wheels; walking may be needed",
            (("speed", "speed", vehicle.min_stable_speed), ("length", "length", slow)),
        ))
    if hill.steepest_grade >= STEEP_GRADE:
        warnings.append(Warning("steep", "caution", "steepest 100 m at {grade}",
                                (("grade", "grade", hill.steepest_grade),)))
    return ClimbRow(
        number=number, hill=hill, power_for_target=float(np.mean(need)), speed_at_effort=hill.length / time,
        time=time, min_speed=float(np.min(speeds)), slow_length=slow, rider_power=rider_power,
        w_prime_low=w_low, safe_power=safe, assist_level=level,
        assist_name=None if motor is None else motor.level_name(level), warnings=tuple(warnings),
    )


def _descent_rows(hills, terrain, rider, ride, wind, rho) -> tuple[DescentRow, ...]:
    if not hills:
        return ()
    vehicle = rider.vehicle
    grade = np.array([h.avg_grade for h in hills])
    mean_wind = np.array([np.mean(wind[h.start:h.end]) for h in hills])
    mean_rho = np.array([np.mean(rho[h.start:h.end]) for h in hills])
    coasts = speed_for_power(0.0, **_physics(rider, grade, mean_wind, mean_rho))  # all descents at once
    rows = []
    for number, (hill, coast) in enumerate(zip(hills, coasts, strict=True), 1):
        coast = float(coast)
        segs = slice(hill.start, hill.end)
        gravity = float(gravity_power(coast, vehicle.mass, hill.avg_grade))
        radii = terrain.curve_radius[hill.start:hill.end + 1]
        tight = hill.start + int(np.argmin(radii))
        curve_speed = float(np.sqrt(vehicle.curve_accel * terrain.curve_radius[tight]))
        warnings = []
        if coast > vehicle.max_descent_speed:
            warnings.append(Warning(
                "fast", "warning",
                "coasting would reach {coast}, above the {cap} set for this vehicle: control the speed",
                (("coast", "speed", coast), ("cap", "speed", vehicle.max_descent_speed)),
            ))
        if curve_speed < min(coast, vehicle.max_descent_speed):
            warnings.append(Warning(
                "curve", "warning",
                "curve of about {radius} radius at {where}: slow to {speed} or less",
                (("radius", "length", float(terrain.curve_radius[tight])),
                 ("where", "distance", float(terrain.distance[tight])), ("speed", "speed", curve_speed)),
            ))
        rows.append(DescentRow(
            number=number, hill=hill, coast_speed=coast,
            max_speed=float(np.max(ride.speed[hill.start:hill.end + 1])), gravity_power=gravity,
            braking_energy=float(np.sum(ride.braking[segs] * ride.time[segs])),
            curve_distance=float(terrain.distance[tight]), curve_speed=curve_speed, warnings=tuple(warnings),
        ))
    return tuple(rows)


@dataclass(frozen=True)
class Checkpoint:
    name: str
    distance: float  # [m] from the start


@dataclass(frozen=True)
class CheckpointWindow:
    checkpoint: Checkpoint
    opens: datetime
    closes: datetime
    arrivals: tuple[datetime, ...]  # one per plan, in the order given


def checkpoints_from_waypoints(track: Track, terrain: Terrain) -> list[Checkpoint]:
    """Waypoints of type "checkpoint" (or named "Checkpoint …") on the route."""
    from cardgen.route.cues import place_points

    chosen = [w for w in track.waypoints
              if w.kind.strip().lower() == "checkpoint" or w.name.strip().lower().startswith("checkpoint")]
    cues, _ = place_points(terrain, chosen, "waypoint")
    return [Checkpoint(c.text, c.distance) for c in cues]


def checkpoint_windows(plans, checkpoints, start: datetime, margin: float):
    """Opening and closing times of checkpoints for riders who all start at ``start``.

    A checkpoint opens ``margin`` seconds before the fastest plan arrives and closes
    ``margin`` seconds after the slowest; the finish closes likewise. Returns
    (windows, finish window).
    """
    def at(plan, distance):
        return start + timedelta(seconds=float(np.interp(distance, plan.terrain.distance, plan.ride.elapsed)))

    rows = []
    for cp in sorted(checkpoints, key=lambda c: c.distance):
        arrivals = tuple(at(p, cp.distance) for p in plans)
        rows.append(CheckpointWindow(cp, min(arrivals) - timedelta(seconds=margin),
                                     max(arrivals) + timedelta(seconds=margin), arrivals))
    finish = Checkpoint("Finish", plans[0].terrain.length)
    arrivals = tuple(at(p, finish.distance) for p in plans)
    return rows, CheckpointWindow(finish, min(arrivals) - timedelta(seconds=margin),
                                  max(arrivals) + timedelta(seconds=margin), arrivals)


def _num(x):
    """A JSON-safe number: None for NaN and infinities."""
    if x is None:
        return None
    x = float(x)
    return x if np.isfinite(x) else None


def route_json(plan: Plan) -> dict:
    """The ``cardgen route --json`` object of DESIGN.md."""
    kmh = 3.6
    totals = plan.totals
    return {
        "route": {
            "name": plan.track.name, "distance_km": plan.terrain.length / 1000,
            "gain_m": plan.terrain.gain, "loss_m": plan.terrain.loss, "points": plan.track.points,
        },
        "vehicle": {"name": plan.rider.vehicle.name, "mass_kg": plan.rider.vehicle.mass,
                    "cda_m2": plan.rider.vehicle.cda, "crr": plan.rider.vehicle.crr},
        "climbs": [{
            "start_km": c.hill.start_distance / 1000, "end_km": c.hill.end_distance / 1000,
            "length_m": c.hill.length, "gain_m": c.hill.height,
            "avg_grade_pct": c.hill.avg_grade * 100, "max_grade_pct": c.hill.steepest_grade * 100,
            "score": c.hill.score, "band": c.hill.band, "power_for_target_w": c.power_for_target,
            "speed_at_effort_kmh": c.speed_at_effort * kmh, "time_s": c.time,
            "assist_level": c.assist_name, "warnings": [w.text for w in c.warnings],
        } for c in plan.climbs],
        "descents": [{
            "start_km": d.hill.start_distance / 1000, "end_km": d.hill.end_distance / 1000,
            "drop_m": d.hill.height, "avg_grade_pct": d.hill.avg_grade * 100,
            "coast_speed_kmh": d.coast_speed * kmh, "gravity_power_w": d.gravity_power,
            "warnings": [w.text for w in d.warnings],
        } for d in plan.descents],
        "totals": {
            "time_s": totals.time, "energy_kj": totals.energy / 1000,
            "food_kcal": totals.food_energy / J_PER_KCAL,
            "battery_wh": None if totals.battery is None else totals.battery / 3600,
        },
    }
