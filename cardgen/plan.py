"""Route × vehicle × effort × conditions → Plan: every number a card or a terminal
table shows, as plain frozen data (SI inside; :func:`route_json` gives the
command-line contract's units).

This first plan holds the rider at a steady power on every 10 m segment (the speed
for that power on that grade, in that wind and air), with the vehicle's descent and
curve speed limits. It knows nothing of GPX or HTML.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from cardgen.physics.atmosphere import air_density_isa
from cardgen.physics.forces import gravity_power, headwind
from cardgen.physics.steady import power_for_speed, speed_for_power
from cardgen.route.climbs import Hill, find_climbs, find_descents
from cardgen.route.cues import Cue, cue_sheet
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain
from cardgen.units import J_PER_KCAL, ms_to_kmh
from cardgen.vehicles import Vehicle

#: Steepest 100 m grade that earns a "steep" note [-]: common practice, no published
#: source (AASHTO's bicycle guide calls grades over 5 % undesirable on shared paths).
STEEP_GRADE = 0.10


@dataclass(frozen=True)
class Conditions:
    """Weather for the day: ``wind_speed`` [m/s], ``wind_from`` [rad] clockwise from
    north (where the wind comes from), ``temperature`` [K] or None for the ISA
    temperature at each altitude."""

    wind_speed: float = 0.0
    wind_from: float = 0.0
    temperature: float | None = None


@dataclass(frozen=True)
class Effort:
    """How the rider rides: ``power`` [W] held along the route, ``target_speed`` [m/s]
    for the "watts to hold this speed" column of climbs."""

    power: float
    target_speed: float


@dataclass(frozen=True)
class Warning:
    """``code`` (stable, for symbols), ``severity`` ("info", "caution", "warning") and
    a plain sentence."""

    code: str
    severity: str
    text: str


@dataclass(frozen=True)
class ClimbRow:
    number: int
    hill: Hill
    power_for_target: float  # [W] mean rider power to hold the target speed
    speed_at_effort: float  # [m/s] average speed at the effort's power
    time: float  # [s] at the effort's power
    slow_length: float  # [m] below the two-wheel stable speed
    warnings: tuple[Warning, ...]


@dataclass(frozen=True)
class DescentRow:
    number: int
    hill: Hill
    coast_speed: float  # [m/s] steady coasting speed on the average grade
    gravity_power: float  # [W] at that speed; negative: gravity drives
    curve_distance: float  # [m] from the start, where the tightest curve is
    curve_speed: float  # [m/s] lateral-acceleration limit there (inf on a straight)
    warnings: tuple[Warning, ...]


@dataclass(frozen=True)
class Totals:
    time: float  # [s] moving
    energy: float  # [J] rider's mechanical work
    food_energy: float  # [J] metabolic, at the vehicle's gross efficiency
    battery: float | None  # [J] drawn from a battery; None: no motor model


@dataclass(frozen=True)
class Plan:
    track: Track
    terrain: Terrain
    vehicle: Vehicle
    effort: Effort
    conditions: Conditions
    climbs: tuple[ClimbRow, ...]
    descents: tuple[DescentRow, ...]
    cues: tuple[Cue, ...]
    arrival: np.ndarray = field(repr=False)  # [s] from the start, at each grid node
    totals: Totals
    warnings: tuple[Warning, ...]


def _segment_air(terrain: Terrain, vehicle: Vehicle, conditions: Conditions):
    """Headwind [m/s] and air density [kg/m³] on every segment."""
    wind = headwind(terrain.heading, conditions.wind_speed, conditions.wind_from)
    mid_elevation = 0.5 * (terrain.elevation[1:] + terrain.elevation[:-1])
    rho = air_density_isa(np.clip(mid_elevation, -1000.0, 9000.0), conditions.temperature)
    return np.asarray(wind, dtype=float), np.asarray(rho, dtype=float)


def _physics(vehicle: Vehicle, grade, wind, rho) -> dict:
    return dict(mass=vehicle.mass, crr=vehicle.crr, cda=vehicle.cda, efficiency=vehicle.efficiency,
                grade=grade, headwind=wind, air_density=rho)


def make_plan(track: Track, terrain: Terrain, vehicle: Vehicle, effort: Effort,
              conditions: Conditions | None = None) -> Plan:
    """Work out the plan of one vehicle and rider on one route (still air and the
    standard atmosphere when ``conditions`` is None)."""
    conditions = conditions or Conditions()
    wind, rho = _segment_air(terrain, vehicle, conditions)
    both = _physics(vehicle, terrain.grade, wind, rho)

    # Whole route at the effort's power, capped by the descent and curve limits.
    free = speed_for_power(effort.power, **both)
    radius = np.minimum(terrain.curve_radius[:-1], terrain.curve_radius[1:])
    cap = np.minimum(vehicle.max_descent_speed, np.sqrt(vehicle.curve_accel * radius))
    speed = np.minimum(free, cap)
    capped = free > cap
    power = np.where(capped, np.clip(power_for_speed(speed, **both), 0.0, effort.power), effort.power)
    seg_time = terrain.step / speed
    arrival = np.concatenate(([0.0], np.cumsum(seg_time)))
    energy = float(np.sum(power * seg_time))
    totals = Totals(time=float(arrival[-1]), energy=energy,
                    food_energy=energy / vehicle.gross_efficiency, battery=None)

    climbs = tuple(_climb_row(i + 1, h, terrain, vehicle, effort, wind, rho)
                   for i, h in enumerate(find_climbs(terrain)))
    descents = tuple(_descent_row(i + 1, h, terrain, vehicle, wind, rho)
                     for i, h in enumerate(find_descents(terrain)))
    cues, cue_warnings = cue_sheet(terrain, track)
    warnings = tuple(Warning("track", "info", w) for w in (*track.warnings, *cue_warnings))
    return Plan(track, terrain, vehicle, effort, conditions, climbs, descents, tuple(cues), arrival,
                totals, warnings)


def _climb_row(number, hill, terrain, vehicle, effort, wind, rho) -> ClimbRow:
    segs = slice(hill.start, hill.end)
    phys = _physics(vehicle, terrain.grade[segs], wind[segs], rho[segs])
    need = power_for_speed(effort.target_speed, **phys)
    power_for_target = float(np.mean(np.maximum(need, 0.0)))
    speed = speed_for_power(effort.power, **phys)
    time = float(np.sum(terrain.step / speed))
    slow = float(np.sum(speed < vehicle.min_stable_speed) * terrain.step)
    warnings = []
    if slow > 0:
        warnings.append(Warning(
            "walk", "warning",
            f"below {ms_to_kmh(vehicle.min_stable_speed):.1f} km/h for about {slow:.0f} m at "
            f"{effort.power:.0f} W: hard to balance on two wheels; walking may be needed",
        ))
    if hill.steepest_grade >= STEEP_GRADE:
        warnings.append(Warning("steep", "caution",
                                f"steepest 100 m at {hill.steepest_grade * 100:.0f} %"))
    return ClimbRow(number, hill, power_for_target, hill.length / time, time, slow, tuple(warnings))


def _descent_row(number, hill, terrain, vehicle, wind, rho) -> DescentRow:
    segs = slice(hill.start, hill.end)
    phys = _physics(vehicle, hill.avg_grade, float(np.mean(wind[segs])), float(np.mean(rho[segs])))
    coast = float(speed_for_power(0.0, **phys))
    gravity = float(gravity_power(coast, vehicle.mass, hill.avg_grade))
    radii = terrain.curve_radius[hill.start:hill.end + 1]
    tight = hill.start + int(np.argmin(radii))
    curve_speed = float(np.sqrt(vehicle.curve_accel * terrain.curve_radius[tight]))
    warnings = []
    if coast > vehicle.max_descent_speed:
        warnings.append(Warning(
            "fast", "warning",
            f"coasting would reach {ms_to_kmh(coast):.0f} km/h, above the "
            f"{ms_to_kmh(vehicle.max_descent_speed):.0f} km/h set for this vehicle: control the speed",
        ))
    if curve_speed < min(coast, vehicle.max_descent_speed):
        warnings.append(Warning(
            "curve", "warning",
            f"curve of about {terrain.curve_radius[tight]:.0f} m radius at km "
            f"{terrain.distance[tight] / 1000:.1f}: slow to {ms_to_kmh(curve_speed):.0f} km/h or less",
        ))
    return DescentRow(number, hill, coast, gravity, float(terrain.distance[tight]), curve_speed,
                      tuple(warnings))


def route_json(plan: Plan) -> dict:
    """The ``cardgen route --json`` object of DESIGN.md."""
    kmh = 3.6
    return {
        "route": {
            "name": plan.track.name, "distance_km": plan.terrain.length / 1000,
            "gain_m": plan.terrain.gain, "loss_m": plan.terrain.loss, "points": plan.track.points,
        },
        "vehicle": {"name": plan.vehicle.name, "mass_kg": plan.vehicle.mass,
                    "cda_m2": plan.vehicle.cda, "crr": plan.vehicle.crr},
        "climbs": [{
            "start_km": c.hill.start_distance / 1000, "end_km": c.hill.end_distance / 1000,
            "length_m": c.hill.length, "gain_m": c.hill.height,
            "avg_grade_pct": c.hill.avg_grade * 100, "max_grade_pct": c.hill.steepest_grade * 100,
            "score": c.hill.score, "band": c.hill.band, "power_for_target_w": c.power_for_target,
            "speed_at_effort_kmh": c.speed_at_effort * kmh, "time_s": c.time,
            "assist_level": None, "warnings": [w.text for w in c.warnings],
        } for c in plan.climbs],
        "descents": [{
            "start_km": d.hill.start_distance / 1000, "end_km": d.hill.end_distance / 1000,
            "drop_m": d.hill.height, "avg_grade_pct": d.hill.avg_grade * 100,
            "coast_speed_kmh": d.coast_speed * kmh, "gravity_power_w": d.gravity_power,
            "warnings": [w.text for w in d.warnings],
        } for d in plan.descents],
        "totals": {
            "time_s": plan.totals.time, "energy_kj": plan.totals.energy / 1000,
            "food_kcal": plan.totals.food_energy / J_PER_KCAL,
            "battery_wh": None if plan.totals.battery is None else plan.totals.battery / 3600,
        },
    }
