"""One rider on one route: wire the route and the physics together into a Plan.

How a rider rides is the effort model of :mod:`cardgen.physics.effort`; the ride is
simulated with inertia, wind on every segment, air density by altitude, and the
vehicle's descent and curve speed limits, braking before them
(:mod:`cardgen.physics.braking`).
"""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from cardgen.physics.assist import (
    Motor,
    assisted_speed,
    battery_energy,
    climb_options,
    rider_power_for_speed,
)
from cardgen.physics.atmosphere import density_along
from cardgen.physics.braking import braking, curve_speed
from cardgen.physics.effort import sustainable_climb_power, w_prime_balance
from cardgen.physics.forces import Air, gravity_power, headwind
from cardgen.physics.ride import Ride
from cardgen.physics.steady import steady_power, steady_speed
from cardgen.plan.assist_levels import Stretch, assist_ratio, pace_assisted
from cardgen.plan.difficulty import CRAWL_LENGTH, CRAWL_SPEED, climb_words
from cardgen.plan.model import (
    Analysis,
    ClimbRow,
    DescentRow,
    Effort,
    Notice,
    Plan,
    TimedCue,
    Totals,
    arrival_time,
)
from cardgen.plan.pacing import W_PRIME_SLACK, Course, Pacer, ceiling, day_effort, ridden_mean
from cardgen.plan.walking import stretches, walking_mask, widened
from cardgen.profiles.riders import Rider
from cardgen.route.climbs import Climb, Descent, find_climbs, find_descents
from cardgen.route.cues import cue_sheet
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain, doubtful
from cardgen.settings import Conditions
from cardgen.units import KMH_PER_MS, Floats

#: Steepest 100 m grade that earns a "steep" note [-]: common practice, no published
#: source (AASHTO's bicycle guide calls grades over 5 % undesirable on shared paths).
STEEP_GRADE = 0.10
#: A plan whose mean power on a climb is at least this share of CP already holds CP
#: there as the card prints it (powers print to 5 W: 3 % of a 150 W CP is 4.5 W); its
#: "over-cp" notice then gives no speed at CP, which the speed column already shows.
#: Common practice, no published source.
HOLDS_CP_SHARE = 0.97
#: A descent's coasting speed earns a "fast" warning only past the vehicle's speed cap
#: by more than this share of the cap [-]: common practice, no published source. 3 %
#: is about what a drag area 6 % off changes the coasting speed by (it goes as
#: CdA^-1/2 where drag dominates), well inside how much CdA varies between riders
#: of one vehicle: within it the model cannot tell coasting from the cap (45.09 km/h
#: against 45.0 km/h is no hazard to warn of). The ride still brakes at the cap.
FAST_MARGIN = 0.03
#: Battery share kept in reserve when judging whether a route fits: common practice,
#: no published source.
BATTERY_RESERVE = 0.20
#: A three-wheeler slower than CRAWL_SPEED for CRAWL_LENGTH (the figures of the climbs'
#: "crawl" word, :mod:`cardgen.plan.difficulty`), or on one climb for CRAWL_TIME [s],
#: gets a "crawl" caution: common practice, no published source.
CRAWL_TIME = 30 * 60.0
#: A driven front wheel (arm-powered handcycles) may slip from this grade [-]: from
#: memory, no published source checked.
TRACTION_GRADE = 0.10
#: Speeds [m/s] at which a climb's power curve is drawn: 2 to 30 km/h.
CURVE_SPEEDS = np.linspace(2.0, 30.0, 57) / KMH_PER_MS


def analyse(track: Track, terrain: Terrain) -> Analysis:
    """Climbs, descents and the cue sheet of a route (done once, shared by riders)."""
    cues, warnings = cue_sheet(terrain, track)
    warnings = [*doubtful(track, terrain), *warnings]
    return Analysis(
        track,
        terrain,
        tuple(find_climbs(terrain)),
        tuple(find_descents(terrain)),
        tuple(cues),
        (*track.warnings, *warnings),
    )


def segment_air(terrain: Terrain, conditions: Conditions) -> Air:
    """The air on every segment: headwind [m/s] and air density [kg/m³], arrays (n,)."""
    against = headwind(terrain.heading, conditions.wind_speed, conditions.wind_from)
    return Air(np.asarray(against, dtype=float), density_along(terrain.elevation, conditions.temperature))


def speed_caps(terrain: Terrain, rider: Rider) -> np.ndarray:
    """Speed limit at every node [m/s]: the vehicle's descent cap and v = √(a·R) in
    curves (a the vehicle's lateral acceleration; FHWA-HRT-04-103, 2004)."""
    v = rider.vehicle
    return np.asarray(np.minimum(v.max_descent_speed, curve_speed(v.curve_accel, terrain.curve_radius)))


def _stretches(
    rider: Rider,
    motor: Motor | None,
    climbs: tuple[Climb, ...],
    terrain: Terrain,
    air: Air,
) -> list[Stretch]:
    """The stretches an assist level is chosen for (none without a motor): each climb,
    asking for the lowest level that holds the target speed within CP
    (:func:`~cardgen.physics.assist.climb_options`), then the route between climbs,
    asking for the rider's ``assist_between_climbs``."""
    if motor is None:
        return []
    stretches = []
    if climbs:
        within = climb_options(
            motor,
            [(c.start, c.end) for c in climbs],
            climb_power=rider.climb_power_used,
            cp=rider.cp,
            target_speed=rider.target_speed,
            resistance=rider.vehicle.resistance,
            grade=terrain.grade,
            air=air,
            step=terrain.step,
            w_prime=rider.w_prime,
        )["within_cp"]
        for k, c in enumerate(climbs):
            segments = np.zeros(terrain.grade.size, dtype=bool)
            segments[c.start : c.end] = True
            wanted = int(np.argmax(within[:, k])) if within[:, k].any() else len(motor.levels)
            stretches.append(Stretch(segments, wanted, True))
    off = np.ones(terrain.grade.size, dtype=bool)
    for c in climbs:
        off[c.start : c.end] = False
    if off.any():
        stretches.append(Stretch(off, rider.assist_between_climbs, False))
    return stretches


def make_plan(
    route: Analysis | Track,
    terrain: Terrain | None = None,
    rider: Rider | None = None,
    conditions: Conditions | None = None,
    stops: tuple[tuple[float, float], ...] = (),
) -> Plan:
    """Work out the plan of one rider on one route (still air and the standard
    atmosphere when ``conditions`` is None).

    ``route`` is an :class:`Analysis` (from :func:`analyse`, shared by several riders),
    or a Track followed by its Terrain. ``stops`` are (where [m], how long [s]) of
    the planned stops (checkpoints, feeds): in every later arrival and the finish.
    """
    if not isinstance(route, Analysis):
        if terrain is None:
            raise ValueError("make_plan needs the Terrain of a Track")
        route = analyse(route, terrain)
    if rider is None:
        raise ValueError("make_plan needs a rider")
    terrain = route.terrain
    conditions = conditions or Conditions()
    vehicle = rider.vehicle
    air = segment_air(terrain, conditions)
    motor = vehicle.fitted_motor()
    stretches = _stretches(rider, motor, route.climbs, terrain, air)
    effort, ride, chosen = _paced(_course(terrain, rider, air, motor, None), rider, stretches)
    between_level = chosen.pop() if stretches and not stretches[-1].climb else None
    off = effort.assist_off_at
    levels = (
        {  # a climb that starts after the motor is switched off is ridden without it
            c.start: 0 if off is not None and c.start_distance >= off else level
            for c, level in zip(route.climbs, chosen, strict=True)
        }
        if chosen
        else {}
    )
    wbal = w_prime_balance(ride.rider_power, ride.time, rider.cp, rider.w_prime)
    walked = walking_mask(terrain.step, ride.time, ride.rider_power, ride.limited, vehicle.min_stable_speed)

    climbs = tuple(
        _climb_row(i + 1, c, terrain, rider, motor, levels.get(c.start), ride, wbal, air, walked)
        for i, c in enumerate(route.climbs)
    )
    curves = curve_notices(terrain, rider, ride, air)
    descents = _descent_rows(route.descents, terrain, rider, ride, air, curves)
    stops = tuple(sorted((float(d), float(s)) for d, s in stops if s > 0))
    timed = tuple(
        TimedCue(c, arrival_time(terrain.distance, ride.elapsed, stops, c.distance)) for c in route.cues
    )
    warnings = _route_notices(route, ride, walked, curves, descents, vehicle.min_stable_speed)
    totals, battery_notices = _totals(terrain, vehicle.gross_efficiency, motor, ride, walked)
    warnings.extend(battery_notices)
    if between_level is not None and between_level < rider.assist_between_climbs:
        warnings.append(
            Notice(
                "assist-lowered",
                "info",
                (("asked", float(rider.assist_between_climbs)), ("level", float(between_level))),
            )
        )
    return Plan(
        route.track,
        terrain,
        rider,
        conditions,
        motor,
        ride,
        wbal,
        climbs,
        descents,
        timed,
        totals,
        tuple(warnings),
        between_level,
        stops,
        effort,
    )


def _course(
    terrain: Terrain,
    rider: Rider,
    air: Air,
    motor: Motor | None,
    ratio: np.ndarray | None,
) -> Course:
    """The route as the pacing sees it: every segment's road, air, speed limit and
    braking, the vehicle's resistance and its motor at the given assist ratios (set
    by :func:`_paced` when None)."""
    return Course(
        step=terrain.step,
        grade=terrain.grade,
        headwind=np.asarray(air.headwind, dtype=float),
        air_density=np.asarray(air.air_density, dtype=float),
        distance=terrain.distance,
        speed_cap=speed_caps(terrain, rider),
        deceleration=braking(terrain.grade),
        resistance=rider.vehicle.resistance,
        motor=motor,
        assist_ratio=ratio if motor is not None else None,
    )


def _route_notices(
    route: Analysis,
    ride: Ride,
    walked: np.ndarray,
    curves: list[Notice],
    descents: tuple[DescentRow, ...],
    walk_speed: float,
) -> list[Notice]:
    """The plan's notices away from its climbs and descents, in the order the pages
    list them: the track's own, walking off the climbs, curves off the descents, a
    ride that did not settle, and where the rider stalls."""
    terrain = route.terrain
    on_climb = np.zeros(terrain.grade.size, dtype=bool)  # with the walks that run into each climb
    for climb in route.climbs:
        on_climb[slice(*widened(walked, *_walk_reach(climb, terrain)))] = True
    warnings = [Notice("track", "info", (("text", w),)) for w in route.warnings]
    warnings.extend(_walks_off_climbs(walked, on_climb, terrain, walk_speed))
    on_descents = {id(w) for row in descents for w in row.warnings}
    warnings.extend(c for c in curves if id(c) not in on_descents)  # curves away from any descent
    if not ride.converged:
        warnings.append(Notice("unsettled", "info", (("passes", float(ride.passes)),)))
    stalled = np.flatnonzero(~np.isfinite(ride.time))
    if stalled.size:  # the speed reached zero: the rider cannot get past this point
        where = float(terrain.distance[stalled[0]])
        warnings.append(Notice("stall", "warning", (("where", where),), at=where))
    return warnings


def _totals(
    terrain: Terrain, gross_efficiency: float, motor: Motor | None, ride: Ride, walked: np.ndarray
) -> tuple[Totals, list[Notice]]:
    """The ride's totals, and the "battery" notice where the battery use passes what
    the battery holds less :data:`BATTERY_RESERVE` (at the place it does)."""
    # work only where the rider pedals: a stalled segment (infinite time) at 0 W adds
    # nothing, one at a positive power makes the total infinite ("cannot complete")
    pedalled = ride.rider_power > 0
    energy = float(
        np.sum(np.multiply(ride.rider_power, ride.time, out=np.zeros_like(ride.time), where=pedalled))
    )
    battery = fits = None
    notices = []
    if motor is not None:
        battery = battery_energy(motor, ride.motor_power, ride.time)
        fits = battery <= motor.usable_battery * (1.0 - BATTERY_RESERVE)
        drawn = np.cumsum(np.nan_to_num(ride.motor_power * ride.time, posinf=0.0)) / motor.drive_efficiency
        over = np.flatnonzero(drawn > motor.usable_battery * (1.0 - BATTERY_RESERVE))
        reserve_at = float(terrain.distance[over[0] + 1]) if over.size else float(terrain.length)
        if not fits:
            notices.append(
                Notice(
                    "battery",
                    "warning",
                    (
                        ("used", battery),
                        ("usable", motor.usable_battery),
                        ("reserve", BATTERY_RESERVE),
                        ("where", reserve_at),
                    ),
                    at=reserve_at,
                )
            )
    totals = Totals(
        time=float(ride.elapsed[-1]),
        energy=energy,
        food_energy=energy / gross_efficiency,
        battery=battery,
        battery_fits=fits,
        walk_length=float(np.sum(walked) * terrain.step),
    )
    return totals, notices


#: Walking this close [m] to a climb's ends is the climb's own (the smoothed grade
#: starts to rise before the climb's foot).
WALK_REACH = 100.0


def _walk_reach(climb: Climb, terrain: Terrain) -> tuple[int, int]:
    """Segments whose walking counts as the climb's: the climb and
    :data:`WALK_REACH` either side (and, by :func:`widened`, the whole of a walked
    stretch that runs into them)."""
    k = int(round(WALK_REACH / terrain.step))
    return max(0, climb.start - k), min(terrain.grade.size, climb.end + k)


def _walks_off_climbs(
    walked: np.ndarray, on_climb: np.ndarray, terrain: Terrain, speed: float
) -> list[Notice]:
    """A "walk" notice for each walked stretch away from the climbs (those on a climb
    are in the climb's own notices)."""
    return [
        Notice(
            "walk",
            "warning",
            (("speed", speed), ("length", (b - a) * terrain.step)),
            at=float(terrain.distance[a]),
        )
        for a, b in stretches(walked & ~on_climb)
    ]


def _paced(course: Course, rider: Rider, stretches: list[Stretch]) -> tuple[Effort, Ride, list[int]]:
    """The rider's pacing plan, ridden, what it assumed, and with a motor the assist
    level of each stretch, chosen with the plan (:func:`pace_assisted`)."""
    style = rider.pacing_style
    top = ceiling(style, rider.cp, rider.climb_share)
    if rider.climb_given:  # the rider's (or coach's) own climbing power is the most the plan asks
        top = min(top, rider.climb_power_used)
    if stretches:
        course = dataclasses.replace(
            course, assist_ratio=assist_ratio(course, stretches, [s.wanted for s in stretches])
        )
    asked, duration = min(rider.flat_power, top), None
    if not rider.effort_given:
        asked, duration = day_effort(course, cp=rider.cp, w_prime=rider.w_prime, top=top)

    pacer = Pacer(asked, rider.cp, rider.w_prime, top)
    levels: list[int] = []
    if stretches and course.motor is not None:
        budget = course.motor.usable_battery * (1.0 - BATTERY_RESERVE)
        paced, levels = pace_assisted(
            course, stretches, pacer, budget=budget, min_speed=rider.vehicle.min_stable_speed
        )
    else:
        paced = pacer(course)
    budgeted = bool(stretches) and course.motor is not None  # cut at the budget, not the empty battery
    effort = Effort(
        style=style,
        mean_power=ridden_mean(paced.ride),
        asked=asked,
        ceiling=top,
        given=rider.effort_given,
        duration=duration,
        battery_empty_at=None if budgeted else paced.empty_at,
        assist_off_at=paced.empty_at if budgeted else None,
    )
    return effort, paced.ride, levels


def _climb_row(
    number: int,
    climb: Climb,
    terrain: Terrain,
    rider: Rider,
    motor: Motor | None,
    level: int | None,
    ride: Ride,
    wbal: np.ndarray,
    air: Air,
    walked: np.ndarray,
) -> ClimbRow:
    vehicle = rider.vehicle
    segs = slice(climb.start, climb.end)
    road: dict[str, Any] = dict(grade=terrain.grade[segs], air=air.over(segs))
    ratio = 0.0 if not level or motor is None else motor.levels[level - 1]
    need = rider_power_for_speed(motor, ratio, rider.target_speed, resistance=vehicle.resistance, **road)
    time = float(np.sum(ride.time[segs]))
    speeds = ride.mean_speed[segs]
    reach = slice(*widened(walked, *_walk_reach(climb, terrain)))
    slow = float(np.sum(walked[reach]) * terrain.step)
    finite = np.isfinite(ride.time[segs])  # a stalled rider never completes some segments
    ridden = float(np.sum(ride.time[segs][finite]))
    rider_power = (
        float(np.sum(ride.rider_power[segs][finite] * ride.time[segs][finite]) / ridden) if ridden else 0.0
    )
    w_low = float(np.min(wbal[segs]))
    before = float(wbal[climb.start - 1]) if climb.start > 0 else rider.w_prime
    warnings = []
    hold = None
    if w_low < -W_PRIME_SLACK * rider.w_prime:
        hold = sustainable_climb_power(
            cp=rider.cp,
            climb_power=rider.climb_power_used,
            w_prime_left=before,
            step=terrain.step,
            resistance=vehicle.resistance,
            **road,
        )
        warnings.append(Notice("w-prime", "warning", (("power", rider_power), ("hold", hold))))
    if slow > 0:
        first = reach.start + int(np.argmax(walked[reach]))
        warnings.append(
            Notice(
                "walk",
                "warning",
                (("speed", vehicle.min_stable_speed), ("length", slow)),
                at=float(terrain.distance[first]),
            )
        )
    if climb.steepest_grade >= STEEP_GRADE:
        warnings.append(
            Notice("steep", "caution", (("grade", climb.steepest_grade), ("length", climb.pitch_length)))
        )
    warnings.extend(_rider_cautions(climb, terrain, rider, motor, ratio, ride, float(np.mean(need)), road))
    if rider_power >= HOLDS_CP_SHARE * rider.cp:  # no sentence suggests a power the plan holds
        warnings = [_without_speed(w) if w.code == "over-cp" else w for w in warnings]
    warnings = [w if w.at is not None else dataclasses.replace(w, at=climb.start_distance) for w in warnings]
    # power needed against speed on the climb's average grade, in its mean wind and air
    mean_air = air.over(segs).mean()

    def needed(speed: Floats) -> np.ndarray:
        return np.asarray(
            steady_power(speed, resistance=vehicle.resistance, grade=climb.avg_grade, air=mean_air)
        )

    curve = needed(CURVE_SPEEDS)
    speed_at_effort = climb.length / time
    return ClimbRow(
        number=number,
        climb=climb,
        power_for_target=float(np.mean(need)),
        speed_at_effort=speed_at_effort,
        time=time,
        min_speed=float(np.min(speeds)),
        slow_length=slow,
        rider_power=rider_power,
        w_prime_low=w_low,
        sustainable_power=hold,
        assist_level=level,
        assist_name=None if motor is None else motor.level_name(level or 0),
        warnings=tuple(warnings),
        rider_difficulty=climb_words(
            climb.band,
            cp=rider.cp,
            rider_power=rider_power,
            walked=slow,
            speed=speeds,
            step=terrain.step,
            w_prime=rider.w_prime,
            w_prime_used=max(0.0, before - w_low),
        ),
        power_curve=(CURVE_SPEEDS, np.asarray(curve)),
        power_at_effort=float(needed(speed_at_effort)),
        time_above_cp=float(np.sum(ride.time[segs][finite & (ride.rider_power[segs] > rider.cp)])),
        w_prime_top=float(wbal[climb.end - 1]),
        recovered_after=_recovered_after(climb, terrain, wbal, rider.w_prime),
        w_prime_used=max(0.0, before - w_low),
        battery_left=None
        if motor is None
        else float(
            motor.usable_battery
            - np.sum(np.nan_to_num(ride.motor_power[: climb.end] * ride.time[: climb.end], posinf=0.0))
            / motor.drive_efficiency
        ),
    )


#: W′ counts as back once the balance is again at this share of W′ (the card's "for
#: the next 2 km" after a climb): common practice, no published source.
RECOVERED = 0.9


def _recovered_after(climb: Climb, terrain: Terrain, wbal: np.ndarray, w_prime: float) -> float | None:
    """Distance [m] from a climb's top until the W′ balance is back at
    :data:`RECOVERED` of W′ (to the finish if it never is); None when the climb left
    more than that."""
    after = wbal[climb.end - 1 :]
    if after[0] >= RECOVERED * w_prime:
        return None
    back = np.flatnonzero(after >= RECOVERED * w_prime)
    end = climb.end - 1 + (int(back[0]) if back.size else after.size - 1)
    return float(terrain.distance[end + 1] - terrain.distance[climb.end])


#: Curves closer than this [m] are one warning (a run of bends), at the tightest.
CURVE_GAP = 150.0
#: A curve is warned where the speed it allows is below this share of the speed the rider
#: would hold there without it (common practice, no published source: a bend that
#: asks for less than a 10 % slow-down is ridden without thinking).
CURVE_SLOWDOWN = 0.9
#: A turn at a junction earns a slow-down note only where coasting alone would carry
#: the rider to it at this multiple of their steady speed on the flat or more, and at
#: :data:`JUNCTION_FAST_SPEED` [m/s] or more: from a descent (common practice, no
#: published source: an ordinary junction is taken without a note).
JUNCTION_FAST = 1.25
JUNCTION_FAST_SPEED = 25.0 / KMH_PER_MS
#: A descent's curves include those this far [m] beyond its foot.
CURVE_REACH = 100.0


def _rider_cautions(
    climb: Climb,
    terrain: Terrain,
    rider: Rider,
    motor: Motor | None,
    ratio: float,
    ride: Ride,
    need: float,
    road: dict[str, Any],
) -> list[Notice]:
    """What this rider on this vehicle should know of a climb beyond the road itself:
    a long crawl on three wheels, a target speed above their CP, traction on a driven
    front wheel."""
    vehicle = rider.vehicle
    segs = slice(climb.start, climb.end)
    notices = []
    if vehicle.wheels == 3:
        crawl = float(np.sum(ride.mean_speed[segs] < CRAWL_SPEED) * terrain.step)
        time = float(np.sum(ride.time[segs]))
        if crawl >= CRAWL_LENGTH or time >= CRAWL_TIME:
            notices.append(
                Notice("crawl", "caution", (("speed", CRAWL_SPEED), ("length", crawl), ("time", time)))
            )
    if need > rider.cp * (1 + 1e-9):
        at_cp = (
            assisted_speed(motor, ratio, rider.cp, resistance=vehicle.resistance, **road)
            if motor
            else steady_speed(rider.cp, resistance=vehicle.resistance, **road)
        )
        # the climb's average speed at CP: its length over its time (never above the
        # speed the target asks, which CP does not reach)
        length = terrain.step * np.sqrt(1.0 + road["grade"] ** 2)
        with np.errstate(divide="ignore"):
            seconds = float(np.sum(length / np.maximum(np.asarray(at_cp, dtype=float), 1e-3)))
        speed = min(float(np.sum(length)) / seconds, rider.target_speed)
        if speed < rider.target_speed:
            notices.append(
                Notice("over-cp", "caution", (("power", need), ("cp", rider.cp), ("speed", speed)))
            )
    if vehicle.propulsion == "arms" and climb.steepest_grade >= TRACTION_GRADE:
        notices.append(Notice("traction", "caution", (("grade", climb.steepest_grade),)))
    return notices


def _without_speed(notice: Notice) -> Notice:
    """``notice`` without its "speed" value."""
    return dataclasses.replace(notice, values=tuple((k, v) for k, v in notice.values if k != "speed"))


def curve_notices(terrain: Terrain, rider: Rider, ride: Ride, air: Air) -> list[Notice]:
    """One "curve" notice for every curve the rider would reach clearly faster than
    the speed v = √(a·R) it allows (FHWA-HRT-04-103, 2004), on or off a descent: where
    the simulated speed (which brakes for the curve) meets that speed and the steady
    speed the rider would hold there without the curve is clearly higher
    (:data:`CURVE_SLOWDOWN`).

    A turn at a single track point (a junction, :attr:`Terrain.junctions`) is a cue,
    not a bend: it gets a notice only where the rider arrives fast from a descent,
    where coasting alone gives :data:`JUNCTION_FAST` times their steady speed on the
    flat and :data:`JUNCTION_FAST_SPEED` or more.
    Its notice carries ``junction`` = 1."""
    vehicle = rider.vehicle
    cap = curve_speed(vehicle.curve_accel, terrain.curve_radius)
    resistance = vehicle.resistance
    free = steady_speed(
        np.maximum(ride.rider_power, 0.0), resistance=resistance, grade=terrain.grade, air=air
    )
    free = np.minimum(np.nan_to_num(free, nan=0.0), vehicle.max_descent_speed)
    free_at_node = np.concatenate((free, free[-1:])) if free.size else np.zeros(cap.size)
    binding = (cap < CURVE_SLOWDOWN * free_at_node) & (ride.speed >= 0.98 * cap) & (ride.speed > 0)
    junction = _junction_nodes(terrain)
    if junction.any():
        still = Air(0.0, float(np.mean(air.air_density)))
        flat = float(steady_speed(rider.flat_power, resistance=resistance, air=still))
        coast = np.nan_to_num(steady_speed(0.0, resistance=resistance, grade=terrain.grade, air=air))
        coast_at_node = np.concatenate((coast[:1], coast))  # the segment that leads to each node
        binding &= ~junction | (coast_at_node >= max(JUNCTION_FAST * flat, JUNCTION_FAST_SPEED))
    nodes = np.flatnonzero(binding)
    notices: list[Notice] = []
    if not nodes.size:
        return notices
    groups = np.split(nodes, np.flatnonzero(np.diff(terrain.distance[nodes]) > CURVE_GAP) + 1)
    for group in groups:
        i = int(group[np.argmin(cap[group])])
        notices.append(
            Notice(
                "curve",
                "warning",
                (
                    ("radius", float(terrain.curve_radius[i])),
                    ("where", float(terrain.distance[i])),
                    ("speed", float(cap[i])),
                    ("junction", float(junction[i])),
                ),
                at=float(terrain.distance[i]),
            )
        )
    return notices


def _junction_nodes(terrain: Terrain) -> np.ndarray:
    """Grid nodes inside a turn at a single track point (a junction)."""
    on = np.zeros(terrain.distance.size, dtype=bool)
    for lo, hi in terrain.junctions:
        on |= (terrain.distance >= lo) & (terrain.distance <= hi)
    return on


def _descent_rows(
    descents: tuple[Descent, ...],
    terrain: Terrain,
    rider: Rider,
    ride: Ride,
    air: Air,
    curves: list[Notice],
) -> tuple[DescentRow, ...]:
    if not descents:
        return ()
    vehicle = rider.vehicle
    grade = np.array([d.avg_grade for d in descents])
    means = [air.over(slice(d.start, d.end)).mean() for d in descents]
    mean_air = Air(np.array([m.headwind for m in means]), np.array([m.air_density for m in means]))
    coasts = np.asarray(
        steady_speed(0.0, resistance=vehicle.resistance, grade=grade, air=mean_air)
    )  # all descents at once
    rows = []
    for number, (descent, coast) in enumerate(zip(descents, coasts, strict=True), 1):
        near = [
            c
            for c in curves
            if descent.start_distance <= c.value("where") <= descent.end_distance + CURVE_REACH
        ]
        rows.append(_descent_row(number, descent, float(coast), terrain, rider, ride, near))
    return tuple(rows)


def _descent_row(
    number: int,
    descent: Descent,
    coast: float,
    terrain: Terrain,
    rider: Rider,
    ride: Ride,
    curves: list[Notice],
) -> DescentRow:
    vehicle = rider.vehicle
    segs = slice(descent.start, descent.end)
    gravity = float(gravity_power(coast, vehicle.mass, descent.avg_grade))
    radii = terrain.curve_radius[descent.start : descent.end + 1]
    tight = descent.start + int(np.argmin(radii))
    slowest = float(curve_speed(vehicle.curve_accel, terrain.curve_radius[tight]))
    warnings = []
    if coast > vehicle.max_descent_speed * (1.0 + FAST_MARGIN):
        warnings.append(Notice("fast", "warning", (("coast", coast), ("cap", vehicle.max_descent_speed))))
    warnings = [dataclasses.replace(w, at=descent.start_distance) for w in warnings]
    warnings.extend(curves)
    return DescentRow(
        number=number,
        descent=descent,
        coast_speed=coast,
        max_speed=float(np.max(ride.speed[descent.start : descent.end + 1])),
        gravity_power=gravity,
        braking_energy=float(np.sum(ride.braking[segs] * ride.time[segs])),
        rider_power=float(
            np.sum(ride.rider_power[segs] * ride.time[segs]) / max(np.sum(ride.time[segs]), 1e-9)
        ),
        curve_distance=float(terrain.distance[tight]),
        curve_speed=slowest,
        warnings=tuple(warnings),
    )
