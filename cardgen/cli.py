"""Command line: the only place that prints and turns errors into exit codes.

Exit codes: 0 success, 1 the input is wrong (one clear message on stderr), 2 usage.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import sys

from cardgen import __version__
from cardgen.errors import CardgenError
from cardgen.profiles.riders import PACING_STYLES

#: Characters that would steer a terminal (escape sequences, bidirectional overrides)
#: when names from GPX files or configs are printed: shown as U+FFFD instead.
_STEERING = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u200e\u200f\u202a-\u202e\u2066-\u2069]")


def _print(*parts: object, **kwargs) -> None:
    """print(), with text that cannot steer the terminal."""
    print(*(_STEERING.sub("\ufffd", str(part)) for part in parts), **kwargs)


#: Above this speed a result says it is outside what the model (and any rider) covers:
#: the descent speed caps of the vehicle library stop near 60 km/h (common practice,
#: no published source).
PLAUSIBLE_SPEED_KMH = 100.0


def _n(value: float | None, spec: str, sign: float = 1.0) -> str:
    """A number of the JSON for the terminal: a dash for null, never "-0"."""
    if value is None:
        width = re.match(r"[<>]?(\d*)", spec)
        return "–".rjust(int(width.group(1) or 0) if width else 0)
    return format(sign * value + 0.0, spec)


def _within(option: str, value: float | None, key: str) -> None:
    """Refuse ``value`` of ``option`` outside its range in the one table of limits
    (:data:`cardgen.profiles.limits.LIMITS`); None (not given) passes."""
    from cardgen.profiles.limits import LIMITS

    if value is None:
        return
    problem = LIMITS[key].problem(value)
    if problem:
        raise CardgenError(f"{option} {problem.removeprefix('= ')}")


def _ensure(condition: bool, message: str) -> None:
    if not condition:
        raise CardgenError(message)


def _finite(value: float | None, name: str) -> None:
    _ensure(value is None or math.isfinite(value), f"{name} must be a finite number")


def _air_density(args) -> float:
    from cardgen.physics.atmosphere import air_density_isa

    if args.air_density is not None:
        _within("--air-density", args.air_density, "air_density_kg_m3")
        return args.air_density
    _within("--altitude", args.altitude, "altitude_m")
    return float(air_density_isa(args.altitude))


def _resistance(args):
    """Mass, Crr, CdA, efficiency, bearing flag and a description from the options."""
    explicit = [args.mass, args.crr, args.cda]
    if args.vehicle is not None:
        _ensure(all(v is None for v in explicit), "give either --vehicle or --mass/--crr/--cda, not both")
        from cardgen.profiles.vehicles import find_vehicle

        v = find_vehicle(args.vehicle)
        eff = v.efficiency if args.efficiency is None else args.efficiency
        return v.mass, v.crr, v.cda, eff, True, f"{v.label} ({v.name})"
    _ensure(
        all(v is not None for v in explicit),
        "give --vehicle NAME, or all three of --mass KG --crr X --cda M2 (see 'cardgen vehicles')",
    )
    _within("--mass", args.mass, "mass_kg")
    _within("--crr", args.crr, "crr")
    _within("--cda", args.cda, "cda_m2")
    eff = 1.0 if args.efficiency is None else args.efficiency
    return args.mass, args.crr, args.cda, eff, False, "custom vehicle"


def _solve_motor(args):
    """The vehicle's motor and the assist ratio asked for (None, 0 without a motor)."""
    from cardgen.profiles.motors import find_motor
    from cardgen.profiles.vehicles import find_vehicle

    vehicle = find_vehicle(args.vehicle) if args.vehicle is not None else None
    if vehicle is None or vehicle.motor is None:
        _ensure(
            args.assist_level is None,
            "--assist-level needs a --vehicle with a motor (see 'cardgen vehicles')",
        )
        return None, 0.0
    motor = find_motor(vehicle.motor)
    if vehicle.battery is not None:
        import dataclasses

        motor = dataclasses.replace(motor, battery=vehicle.battery)
    level = args.assist_level or 0
    _ensure(
        0 <= level <= len(motor.levels),
        f"--assist-level {level} is outside 0…{len(motor.levels)} for this motor",
    )
    return motor, (0.0 if level == 0 else motor.levels[level - 1])


def _with_assist(function, motor, ratio, value, common):
    """``function`` of :mod:`cardgen.physics.assist` (assisted_speed for a power,
    rider_power_for_speed for a speed) on the solve command's vehicle and road."""
    from cardgen.physics.forces import Resistance

    res = Resistance(
        mass=common["mass"],
        crr=common["crr"],
        cda=common["cda"],
        efficiency=common["efficiency"],
        bearings=common["bearings"],
    )
    return function(
        motor,
        ratio,
        value,
        resistance=res,
        grade=common["grade"],
        headwind=common["headwind"],
        air_density=common["air_density"],
    )


def cmd_solve(args) -> int:
    from cardgen.physics.assist import assisted_speed, rider_power_for_speed
    from cardgen.physics.forces import steady_breakdown
    from cardgen.physics.steady import speed_for_power
    from cardgen.units import kmh_to_ms, ms_to_kmh, pct_to_grade

    for name in (
        "power",
        "speed",
        "grade",
        "headwind",
        "mass",
        "crr",
        "cda",
        "efficiency",
        "altitude",
        "air_density",
    ):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    _within("--grade", args.grade, "grade_pct")
    _within("--headwind", args.headwind, "headwind_kmh")
    _within("--efficiency", args.efficiency, "efficiency")
    mass, crr, cda, eff, bearings, label = _resistance(args)
    rho = _air_density(args)
    grade = float(pct_to_grade(args.grade))
    headwind = float(kmh_to_ms(args.headwind))
    common = dict(
        mass=mass,
        crr=crr,
        cda=cda,
        efficiency=eff,
        grade=grade,
        headwind=headwind,
        air_density=rho,
        bearings=bearings,
    )
    motor, ratio = _solve_motor(args)
    if args.power is not None:
        _within("--power", args.power, "power_w")
        speed = float(speed_for_power(args.power, **common))
        if motor is not None and ratio > 0:
            speed = float(_with_assist(assisted_speed, motor, ratio, args.power, common))
        _ensure(math.isfinite(speed), "no steady speed exists for these values; check the inputs")
    else:
        _within("--speed", args.speed, "speed_kmh")
        speed = float(kmh_to_ms(args.speed))
    parts = steady_breakdown(speed, **common)
    if args.power is not None:
        power = float(args.power)
    elif motor is not None and ratio > 0:
        power = float(_with_assist(rider_power_for_speed, motor, ratio, speed, common))
    else:
        power = float(parts.total)
    motor_w = 0.0
    if motor is not None and ratio > 0:
        from cardgen.physics.assist import motor_power

        motor_w = float(motor_power(motor, ratio, speed, power))
    breakdown = {
        "rolling": float(parts.rolling + parts.bearings),
        "aero": float(parts.aero),
        "gravity": float(parts.gravity),
        "drivetrain": float(power * (1 - eff)) if motor_w > 0 and power > 0 else float(parts.drivetrain),
    }
    result = {
        "speed_kmh": float(ms_to_kmh(speed)),
        "power_w": power,
        "grade_pct": args.grade,
        "headwind_kmh": args.headwind,
        "air_density_kg_m3": rho,
        "breakdown_w": breakdown,
    }
    if motor is not None:
        result["assist_level"] = args.assist_level or 0
        result["motor_w"] = motor_w
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    _print_solve(args, result, label, (mass, cda, crr, eff), rho, speed, power, motor, motor_w, bearings)
    return 0


def _print_solve(args, result, label, vehicle, rho, speed, power, motor, motor_w, bearings) -> None:
    """The solve command's words for a person."""
    mass, cda, crr, eff = vehicle
    breakdown = result["breakdown_w"]
    _print(f"{label}: {mass:g} kg, CdA {cda:.3f} m², Crr {crr:.4f}, drivetrain {eff * 100:.1f} %")
    wind = "headwind" if args.headwind >= 0 else "tailwind"
    _print(f"grade {args.grade:+.1f} %, {wind} {abs(args.headwind):.1f} km/h, air density {rho:.3f} kg/m³")
    _print()
    if speed == 0 and args.power is not None:
        _print("  speed        0 km/h: this power cannot keep the vehicle moving here")
    else:
        _print(f"  speed   {result['speed_kmh']:8.1f} km/h")
        if result["speed_kmh"] > PLAUSIBLE_SPEED_KMH:
            _print(
                f"  note: bicycles are not ridden above {PLAUSIBLE_SPEED_KMH:.0f} km/h, and air and tyres "
                "stop behaving as the model assumes there; check the inputs"
            )
    _print(f"  power   {power:8.0f} W at the pedals")
    if motor is not None:
        if motor_w > 0 or (args.assist_level or 0) > 0:
            _print(f"  motor   {motor_w:8.0f} W at the wheel ({motor.level_name(args.assist_level)})")
        else:
            _print(f"  motor is off: give --assist-level 1…{len(motor.levels)} to ride with assistance")
    _print()
    spent = sum(v for v in breakdown.values() if v > 0)
    _print("  term         power   share of power spent")
    for term, value in breakdown.items():
        share = f"{100 * value / spent:5.0f} %" if value > 0 and spent > 0 else "    —"
        note = "  (gives power)" if value < 0 else ""
        _print(f"  {term:<10} {value:7.0f} W   {share}{note}")
    if bearings:
        _print("\n  rolling includes wheel-bearing friction (Dahn et al. 1991).")


def _route_plan(args):
    """Read, analyse and plan one route from the ``route`` command's options."""
    from cardgen.io.gpx import read_gpx
    from cardgen.physics.atmosphere import Conditions
    from cardgen.plan import plan_route
    from cardgen.profiles.riders import Rider
    from cardgen.profiles.vehicles import find_vehicle
    from cardgen.units import celsius_to_kelvin, kmh_to_ms

    for name in ("power", "target_speed", "wind", "wind_from", "temperature", "cp", "w_prime"):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    vehicle = find_vehicle(args.vehicle)
    _within("--power", args.power, "route_power_w")
    _within("--cp", args.cp, "cp_w")
    _within("--w-prime", None if args.w_prime is None else args.w_prime / 1000, "w_prime_kj")
    given: dict = {}
    if args.power is not None:
        given.update(flat_power=args.power, climb_power=args.power)
    if args.cp is not None:
        given["cp"] = args.cp
    if args.w_prime is not None:
        given["w_prime"] = args.w_prime
    if args.pacing is not None:
        given["pacing"] = args.pacing
    _within("--target-speed", args.target_speed, "target_kmh")
    target = vehicle.climb_speed if args.target_speed is None else float(kmh_to_ms(args.target_speed))
    _within("--wind", args.wind, "wind_kmh")
    _within("--wind-from", args.wind_from, "wind_from_deg")
    temperature = None
    if args.temperature is not None:
        _within("--temperature", args.temperature, "temperature_c")
        temperature = float(celsius_to_kelvin(args.temperature))
    conditions = Conditions(float(kmh_to_ms(args.wind)), math.radians(args.wind_from), temperature)
    rider = Rider.for_vehicle(vehicle, target_speed=target, **given)
    return plan_route(read_gpx(args.gpx), [rider], conditions, where=str(args.gpx)).plans[0]


def cmd_route(args) -> int:
    from cardgen.render.exports import route_json
    from cardgen.render.format import duration
    from cardgen.render.notices import notice_text

    plan = _route_plan(args)
    if args.trace is not None:
        _write_trace(plan, args.trace)
    data = route_json(plan)
    if args.json:
        print(json.dumps(data, indent=2, ensure_ascii=False))
        return 0
    r, v, t = data["route"], plan.rider.vehicle, data["totals"]
    _print(
        f"{r['name']}: {_n(r['distance_km'], '.1f')} km, +{_n(r['gain_m'], '.0f')} m / -{_n(r['loss_m'], '.0f')} m"
    )
    e, rider = plan.effort, plan.rider
    _print(
        f"{v.label} ({v.name}), {v.mass:.0f} kg; CP {rider.cp:.0f} W, W′ {rider.w_prime / 1000:.1f} kJ; "
        f"climb target {rider.target_speed * 3.6:.1f} km/h"
    )
    assumed = "" if e.given else f", the default for a ride of about {duration(e.duration or 0.0)}"
    _print(f"Pacing: {e.style}, mean {e.mean_power:.0f} W ({e.mean_power / rider.cp:.0%} of CP{assumed})")
    _print()
    if data["climbs"]:
        _print(" #   km        length  gain  avg   max   FIETS band       W@target  km/h  time")
        for i, c in enumerate(data["climbs"], 1):
            _print(
                f"{i:2}  {_n(c['start_km'], '5.1f')}-{_n(c['end_km'], '<5.1f')} {_n(c['length_m'], '6.0f')} m {_n(c['gain_m'], '4.0f')}m "
                f"{_n(c['avg_grade_pct'], '4.1f')}% {_n(c['max_grade_pct'], '4.1f')}% {_n(c['score'], '5.2f')} "
                f"{c['band']:<10} {_n(c['power_for_target_w'], '6.0f')} W {_n(c['speed_at_effort_kmh'], '5.1f')} "
                f"{duration(c['time_s']):>5}"
            )
            if c["assist_level"] is not None:
                _print(f"      assist: {c['assist_level']}")
            for w in c["warnings"]:
                _print(f"      ! {w['text']}")
    else:
        _print("No climbs.")
    _print()
    if data["descents"]:
        _print(" #   km          drop  avg     coasting   gravity")
        for i, d in enumerate(data["descents"], 1):
            _print(
                f"{i:2}  {_n(d['start_km'], '5.1f')}-{_n(d['end_km'], '<5.1f')} {_n(d['drop_m'], '5.0f')} m {_n(d['avg_grade_pct'], '5.1f')}% "
                f"{_n(d['coast_speed_kmh'], '6.0f')} km/h {_n(d['gravity_power_w'], '6.0f', -1)} W from gravity"
            )
            for w in d["warnings"]:
                _print(f"      ! {w['text']}")
    else:
        _print("No descents.")
    _print()
    battery = "" if t["battery_wh"] is None else f", battery about {_n(t['battery_wh'], '.0f')} Wh"
    _print(
        f"Moving time {duration(t['time_s'])}, work {_n(t['energy_kj'], '.0f')} kJ, "
        f"food about {_n(t['food_kcal'], '.0f')} kcal{battery}"
    )
    turns = sum(1 for c in plan.cues if c.cue.kind == "turn")
    _print(f"{len(plan.cues)} cues ({turns} turns)")
    for w in plan.warnings:
        _print(f"note: {notice_text(w)}")
    _print("\nModel estimates, not guarantees. Ride descents to the conditions; local road rules apply.")
    return 0


def _write_trace(plan, path: str) -> None:
    """Write the plan's node-by-node trace to ``path``, whole or not at all."""
    from pathlib import Path

    from cardgen.render.exports import trace_csv_text

    target = Path(path)
    temporary = target.with_name(f".{target.name}.cardgen-tmp-{os.getpid()}")
    try:
        temporary.write_text(trace_csv_text(plan), encoding="utf-8")
        os.replace(temporary, target)
    except OSError as exc:
        temporary.unlink(missing_ok=True)
        raise CardgenError(f"{path}: cannot write the trace ({exc.strerror or exc})") from None


def _site_config(target: str | None):
    """The configuration for ``build``/``check``: the bundled demo, a site.toml, or a
    folder (with or without site.toml)."""
    from pathlib import Path

    from cardgen.config import folder_config, gpx_config, load_config

    if target is None:
        from cardgen.paths import demo_site

        return load_config(demo_site()), True
    path = Path(target)
    if path.is_dir():
        return (
            load_config(path / "site.toml") if (path / "site.toml").is_file() else folder_config(path)
        ), False
    if not path.exists():
        raise CardgenError(f"{path}: no such file or folder; give a site.toml or a folder of .gpx files")
    if path.suffix.lower() == ".gpx":
        return gpx_config(path), False
    return load_config(path), False


def _progress_printer():
    """A rich progress bar on a terminal, plain lines otherwise. Returns (callback, close)."""
    if sys.stderr.isatty():
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

        bar = Progress(
            TextColumn("cards"),
            BarColumn(),
            MofNCompleteColumn(),
            TextColumn("{task.description}"),
            transient=True,
        )
        task = None

        def update(done, total, label):
            nonlocal task
            if task is None:
                bar.start()
                task = bar.add_task(label, total=total)
            bar.update(task, completed=done, description=label)

        return update, bar.stop

    def plain(done, total, label):
        _print(f"card {done}/{total}: {label}", file=sys.stderr)

    return plain, lambda: None


def cmd_build(args) -> int:
    import os
    from pathlib import Path

    from cardgen.build import build_site

    config, demo = _site_config(args.site)
    _say_config(config)
    out = Path(args.output) if args.output else (Path.cwd() / "site" if demo else config.output)
    jobs = args.jobs or min(os.cpu_count() or 1, 64)
    progress, close = _progress_printer()
    try:
        report = build_site(
            config,
            out,
            jobs=jobs,
            pdf=not args.no_pdf,
            keep_going=args.keep_going,
            say=lambda text: _print(text, file=sys.stderr),
            progress=progress,
        )
    finally:
        close()
    if not report.up_to_date:
        _print(
            f"built {out}: {report.routes - len(report.failed)} of {report.routes} routes "
            f"({report.routes_reused} unchanged), {report.cards_rendered} cards rendered, {report.cards_reused} reused"
        )
    if report.failed:
        _print(f"cardgen: {len(report.failed)} route(s) failed and were left out:", file=sys.stderr)
        for failure in report.failed:
            _print(f"  {failure}", file=sys.stderr)
    _print(f"open {out / 'index.html'}")
    return 1 if report.failed else 0


def _say_config(config) -> None:
    """The configuration's warnings and what the model changed, once each."""
    for warning in config.warnings:
        _print(f"cardgen: warning: {warning}", file=sys.stderr)
    for note in config.notes:
        _print(f"cardgen: note: {note}", file=sys.stderr)


#: Riders named by ``check`` (a field of thousands is counted, not listed).
CHECK_NAMES = 12


def _print_waves(config) -> None:
    """Each start wave's riders and first and last start (one start line per wave,
    whatever the routes its riders ride)."""
    from cardgen.config import plural
    from cardgen.plan.starts import event_starts

    starts = event_starts(config)
    shown = "%H:%M:%S" if starts.to_second else "%H:%M"
    for wave in starts.waves:
        if wave.riders and wave.first and wave.last:
            _print(
                f"wave {wave.name}: {plural(wave.riders, 'start')}, first {wave.first:{shown}}, "
                f"last {wave.last:{shown}}"
            )
        else:
            _print(f"wave {wave.name}: no riders start in it")


def cmd_check(args) -> int:
    """Everything a build can find without rendering, all at once."""
    from cardgen.config import plural
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import analyse
    from cardgen.route.checkpoints import resolve_checkpoints
    from cardgen.route.terrain import build_terrain

    config, _ = _site_config(args.site)
    _say_config(config)
    problems = []
    for route in config.routes:
        try:
            track = read_gpx(route.gpx)
            terrain = build_terrain(track)
            analysis = analyse(track, terrain)
            checkpoints = resolve_checkpoints(route.checkpoints, track, terrain, str(route.gpx))
        except CardgenError as exc:
            problems.append(str(exc))
            continue
        _print(
            f"ok  {route.gpx.name}: {terrain.length / 1000:.1f} km, {plural(track.points, 'point')}, "
            f"{plural(len(analysis.climbs), 'climb')}, {plural(len(checkpoints), 'checkpoint')}"
        )
        for warning in analysis.warnings:
            _print(f"cardgen: warning: {route.gpx.name}: {warning}", file=sys.stderr)
    names = [r.rider.name for r in config.riders[:CHECK_NAMES]]
    more = len(config.riders) - len(names)
    _print(
        f"{plural(len(config.riders), 'rider')}: "
        + "; ".join(names)
        + (f"; and {more:,} more" if more > 0 else "")
    )
    _print_waves(config)
    if problems:
        raise CardgenError("\n  ".join([f"{plural(len(problems), 'route problem')}:"] + problems))
    _print("configuration and routes are fine; nothing was written")
    return 0


def _watch_paths(config) -> list:
    """What a watched site is made of: every file its configuration reads, and its
    templates."""
    from pathlib import Path

    paths = [Path(p) for p in config.inputs if Path(p).is_file()]
    if config.templates:
        paths.extend(p for p in Path(config.templates).rglob("*") if p.is_file())
    return paths


def cmd_serve(args) -> int:
    import ipaddress
    import threading
    from pathlib import Path

    from cardgen.serve import PreviewServer, watch

    if args.watch is not None:
        from cardgen.build import build_site

        config, demo = _site_config(args.watch)
        paths = _watch_paths(config)  # before building: a change from now on is caught
        folder = Path(args.folder).resolve() if args.folder else config.output
        build_site(config, folder, jobs=1, pdf=not args.no_pdf)
    else:
        folder = Path(args.folder or "site").resolve()
    _ensure(folder.is_dir(), f"{folder}: no such folder; build the site first (cardgen build)")
    try:
        server = PreviewServer((args.host, args.port), folder)
    except (OSError, OverflowError) as exc:
        raise CardgenError(
            f"cannot listen on {args.host}:{args.port} ({getattr(exc, 'strerror', exc)}); "
            "try another --port or --host"
        ) from None
    try:
        local = ipaddress.ip_address(args.host).is_loopback
    except ValueError:
        local = args.host == "localhost"
    if not local:
        _print(
            f"cardgen: warning: serving on {args.host}: anyone on that network can see the site",
            file=sys.stderr,
        )
    stop = threading.Event()
    if args.watch is not None:

        def say(text: str) -> None:
            _print(text, file=sys.stderr, flush=True)

        threading.Thread(
            target=watch,
            args=(
                lambda: _site_config(args.watch)[0],
                _watch_paths,
                lambda c: build_site(c, folder, jobs=1, pdf=not args.no_pdf),
                say,
                stop,
                paths,
            ),
            daemon=True,
        ).start()
    host, port = str(server.server_address[0]), server.server_address[1]
    _print(f"serving {folder} at http://{host}:{port}/ (Ctrl-C stops)", flush=True)
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        pass
    finally:
        stop.set()
        server.server_close()
    return 0


def cmd_vehicles(args) -> int:
    from cardgen.profiles.vehicles import builtin_vehicles
    from cardgen.units import ms_to_kmh

    library = builtin_vehicles()
    if args.json:
        rows = []
        for v in library.values():
            rows.append(
                {
                    "name": v.name,
                    "label": v.label,
                    "wheels": v.wheels,
                    "propulsion": v.propulsion,
                    "vehicle_mass_kg": v.vehicle_mass,
                    "rider_mass_kg": v.rider_mass,
                    "mass_kg": v.mass,
                    "cda_m2": v.cda,
                    "crr": v.crr,
                    "efficiency": v.efficiency,
                    "wheel_inertia_kg": v.wheel_inertia_mass,
                    "gross_efficiency": v.gross_efficiency,
                    "typical_power_w": v.typical_power,
                    "climb_speed_kmh": float(ms_to_kmh(v.climb_speed)),
                    "max_descent_speed_kmh": float(ms_to_kmh(v.max_descent_speed)),
                    "curve_accel_m_s2": v.curve_accel,
                    "sources": dict(v.sources),
                }
            )
        print(json.dumps(rows, indent=2))
        return 0
    _print(f"{'name':<16} {'wheels':>6} {'mass kg':>8} {'CdA m²':>7} {'Crr':>7} {'drive':>6}  description")
    for v in library.values():
        _print(
            f"{v.name:<16} {v.wheels:>6} {v.mass:>8.0f} {v.cda:>7.2f} {v.crr:>7.4f} "
            f"{v.efficiency * 100:>5.1f}%  {v.label}"
        )
    _print("\nmass is vehicle + rider(s). Sources of every value: cardgen vehicles --json")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="cardgen",
        description="Route power cards and pages from GPX routes.",
    )
    parser.add_argument("--version", action="version", version=f"cardgen {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    build = sub.add_parser(
        "build",
        help="build the site and PDF cards (no argument: the demo event)",
        description="Build the site and PDF cards. No argument: the bundled demo event into ./site.",
    )
    build.add_argument("site", nargs="?", metavar="SITE.toml|FOLDER")
    build.add_argument("-o", "--output", metavar="OUT", help="output folder")
    build.add_argument(
        "--jobs",
        type=_ranged(1, 64, "worker processes"),
        metavar="N",
        help="card-rendering processes (default: the number of cores)",
    )
    build.add_argument("--no-pdf", action="store_true", help="pages only, no PDF cards")
    build.add_argument(
        "--keep-going", action="store_true", help="publish the good routes when some fail (exit 1)"
    )
    build.set_defaults(run=cmd_build)

    check = sub.add_parser(
        "check",
        help="check a site's configuration and routes; writes nothing",
        description="Check a site's configuration and routes; writes nothing.",
    )
    check.add_argument("site", metavar="SITE.toml|FOLDER")
    check.set_defaults(run=cmd_check)

    solve = sub.add_parser(
        "solve",
        help="steady power for a speed, or speed for a power",
        description="Steady power for a speed, or speed for a power.",
    )
    goal = solve.add_mutually_exclusive_group(required=True)
    goal.add_argument("--power", type=float, metavar="W", help="rider power at the pedals")
    goal.add_argument("--speed", type=float, metavar="KMH", help="ground speed")
    solve.add_argument("--grade", type=float, default=0.0, metavar="PCT", help="road grade in %%")
    solve.add_argument(
        "--headwind",
        type=float,
        default=0.0,
        metavar="KMH",
        help="wind against the direction of travel; negative is a tailwind",
    )
    solve.add_argument("--vehicle", metavar="NAME|FILE", help="built-in vehicle or TOML profile")
    solve.add_argument("--mass", type=float, metavar="KG", help="total mass, rider + vehicle")
    solve.add_argument("--crr", type=float, metavar="X", help="rolling-resistance coefficient")
    solve.add_argument("--cda", type=float, metavar="M2", help="drag area")
    solve.add_argument(
        "--efficiency",
        type=float,
        metavar="E",
        help="drivetrain efficiency (default: the vehicle's; 1.0 with --mass/--crr/--cda)",
    )
    air = solve.add_mutually_exclusive_group()
    air.add_argument(
        "--altitude",
        type=float,
        default=0.0,
        metavar="M",
        help="altitude for the ISA air density (default 0)",
    )
    air.add_argument("--air-density", type=float, metavar="KGM3", help="air density")
    solve.add_argument(
        "--assist-level",
        type=_ranged(0, 10, "0: motor off"),
        metavar="N",
        help="e-assist vehicles: the assist level (default 0, the motor off)",
    )
    solve.add_argument("--json", action="store_true", help="print one JSON object")
    solve.set_defaults(run=cmd_solve)

    route = sub.add_parser(
        "route",
        help="climbs, descents, cues and times of one GPX route",
        description="Climbs, descents, cues and times of one GPX route.",
    )
    route.add_argument("gpx", metavar="ROUTE.gpx")
    route.add_argument(
        "--vehicle",
        default="road-hoods",
        metavar="NAME|FILE",
        help="built-in vehicle or TOML profile (default road-hoods)",
    )
    route.add_argument(
        "--power",
        type=float,
        metavar="W",
        help="the rider's mean power over the ride (default: from the ride's length and the CP)",
    )
    route.add_argument("--cp", type=float, metavar="W", help="the rider's critical power")
    route.add_argument("--w-prime", type=float, metavar="J", help="the rider's W′ (work above CP)")
    route.add_argument(
        "--pacing",
        choices=PACING_STYLES,
        help="best: spend W′ where it saves most time; steady: never above CP "
        "(default: steady on arm-powered vehicles, best on the others)",
    )
    route.add_argument("--trace", metavar="OUT.csv", help="write the plan at every simulation node")
    route.add_argument(
        "--target-speed",
        type=float,
        metavar="KMH",
        help="climbing speed for the watts column (default: the vehicle's)",
    )
    route.add_argument("--wind", type=float, default=0.0, metavar="KMH", help="wind speed")
    route.add_argument(
        "--wind-from",
        type=float,
        default=0.0,
        metavar="DEG",
        help="direction the wind comes from, degrees clockwise from north",
    )
    route.add_argument(
        "--temperature",
        type=float,
        metavar="C",
        help="air temperature (default: standard atmosphere at each altitude)",
    )
    route.add_argument("--json", action="store_true", help="print one JSON object")
    route.set_defaults(run=cmd_route)

    serve = sub.add_parser(
        "serve",
        help="preview a built site over HTTP (127.0.0.1 unless --host)",
        description="Serve a built site for preview, on 127.0.0.1 unless --host says otherwise.",
    )
    serve.add_argument("folder", nargs="?", metavar="OUT", help="the built site (default: site)")
    serve.add_argument(
        "--port",
        type=_ranged(0, 65535, "0: any free port"),
        default=8000,
        metavar="N",
        help="port to listen on (0: any free)",
    )
    serve.add_argument(
        "--host",
        default="127.0.0.1",
        metavar="ADDRESS",
        help="address to listen on (default 127.0.0.1; 0.0.0.0 shows the site to your network)",
    )
    serve.add_argument(
        "--watch",
        metavar="SITE.toml|FOLDER",
        help="build this site first, then rebuild it whenever its files change",
    )
    serve.add_argument("--no-pdf", action="store_true", help="with --watch: pages only, for quick previews")
    serve.set_defaults(run=cmd_serve)

    vehicles = sub.add_parser(
        "vehicles", help="list the built-in vehicles", description="List the built-in vehicles."
    )
    vehicles.add_argument("--json", action="store_true", help="every value with its source, as JSON")
    vehicles.set_defaults(run=cmd_vehicles)
    return parser


def _ranged(low: int, high: int, what: str):
    """An argparse type: a whole number from ``low`` to ``high`` (else a usage error, exit 2)."""

    def parse(text: str) -> int:
        try:
            value = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
        if not low <= value <= high:
            raise argparse.ArgumentTypeError(f"{value} is outside {low}…{high} ({what})")
        return value

    return parse


def _check_source_date_epoch() -> None:
    """SOURCE_DATE_EPOCH (reproducible builds) must be whole seconds from 1970 to 9999;
    anything else is ignored, with a warning, rather than crashing the plot writer."""
    value = os.environ.get("SOURCE_DATE_EPOCH")
    if value is None:
        return
    if not (value.strip().isdigit() and int(value) <= 253402300799):
        _print(
            f"cardgen: warning: SOURCE_DATE_EPOCH={value[:30]!r} is not whole seconds since 1970 "
            "(up to the year 9999); ignored",
            file=sys.stderr,
        )
        del os.environ["SOURCE_DATE_EPOCH"]


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    _check_source_date_epoch()
    try:
        return args.run(args)
    except CardgenError as exc:
        _print(f"cardgen: error: {exc}", file=sys.stderr)
        return 1
    except OSError as exc:  # the machine's side: disk full, permissions, a vanished folder
        where = f"{exc.filename}: " if exc.filename else ""
        _print(
            f"cardgen: error: {where}{exc.strerror or exc}; nothing was published, the previous output is "
            "unchanged",
            file=sys.stderr,
        )
        return 1
    except KeyboardInterrupt as exc:
        message = getattr(
            exc, "message", "interrupted; nothing was published, the previous output is unchanged"
        )
        _print(f"cardgen: {message}", file=sys.stderr)
        return 130
