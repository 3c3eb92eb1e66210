"""Command line: the only place that prints and turns errors into exit codes.

Exit codes: 0 success, 1 the input is wrong (one clear message on stderr), 2 usage.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from cardgen import __version__
from cardgen.errors import CardgenError

#: Limits of the command-line inputs: beyond them the model is not trustworthy.
GRADE_LIMIT_PCT = 50.0
SPEED_LIMIT_KMH = 150.0
POWER_LIMIT_W = 3000.0
WIND_LIMIT_KMH = 150.0


def _ensure(condition: bool, message: str) -> None:
    if not condition:
        raise CardgenError(message)


def _finite(value: float | None, name: str) -> None:
    _ensure(value is None or math.isfinite(value), f"{name} must be a finite number")


def _air_density(args) -> float:
    from cardgen.physics.atmosphere import air_density_isa

    if args.air_density is not None:
        _ensure(0.3 <= args.air_density <= 1.6, f"--air-density {args.air_density} is outside 0.3…1.6 kg/m³")
        return args.air_density
    _ensure(-1000 <= args.altitude <= 9000, f"--altitude {args.altitude} is outside -1000…9000 m")
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
    _ensure(20 <= args.mass <= 600, f"--mass {args.mass} kg is outside 20…600 kg (rider + vehicle)")
    _ensure(0 <= args.crr <= 0.1, f"--crr {args.crr} is outside 0…0.1")
    _ensure(0.05 <= args.cda <= 3, f"--cda {args.cda} m² is outside 0.05…3 m²")
    eff = 1.0 if args.efficiency is None else args.efficiency
    return args.mass, args.crr, args.cda, eff, False, "custom vehicle"


def cmd_solve(args) -> int:
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
    _ensure(abs(args.grade) <= GRADE_LIMIT_PCT, f"--grade {args.grade} % is outside ±{GRADE_LIMIT_PCT:g} %")
    _ensure(
        abs(args.headwind) <= WIND_LIMIT_KMH,
        f"--headwind {args.headwind} km/h is outside ±{WIND_LIMIT_KMH:g} km/h",
    )
    if args.efficiency is not None:
        _ensure(0.5 <= args.efficiency <= 1, f"--efficiency {args.efficiency} is outside 0.5…1")
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
    if args.power is not None:
        _ensure(abs(args.power) <= POWER_LIMIT_W, f"--power {args.power} W is outside ±{POWER_LIMIT_W:g} W")
        speed = float(speed_for_power(args.power, **common))
        _ensure(math.isfinite(speed), "no steady speed exists for these values; check the inputs")
    else:
        _ensure(
            0 <= args.speed <= SPEED_LIMIT_KMH,
            f"--speed {args.speed} km/h is outside 0…{SPEED_LIMIT_KMH:g} km/h",
        )
        speed = float(kmh_to_ms(args.speed))
    parts = steady_breakdown(speed, **common)
    power = float(parts.total) if args.power is None else float(args.power)
    breakdown = {
        "rolling": float(parts.rolling + parts.bearings),
        "aero": float(parts.aero),
        "gravity": float(parts.gravity),
        "drivetrain": float(parts.drivetrain),
    }
    result = {
        "speed_kmh": float(ms_to_kmh(speed)),
        "power_w": power,
        "grade_pct": args.grade,
        "headwind_kmh": args.headwind,
        "air_density_kg_m3": rho,
        "breakdown_w": breakdown,
    }
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    print(f"{label}: {mass:g} kg, CdA {cda:.3f} m², Crr {crr:.4f}, drivetrain {eff * 100:.1f} %")
    wind = "headwind" if args.headwind >= 0 else "tailwind"
    print(f"grade {args.grade:+.1f} %, {wind} {abs(args.headwind):.1f} km/h, air density {rho:.3f} kg/m³")
    print()
    if speed == 0 and args.power is not None:
        print("  speed        0 km/h: this power cannot keep the vehicle moving here")
    else:
        print(f"  speed   {result['speed_kmh']:8.1f} km/h")
    print(f"  power   {power:8.0f} W at the pedals")
    print()
    spent = sum(v for v in breakdown.values() if v > 0)
    print("  term         power   share of power spent")
    for term, value in breakdown.items():
        share = f"{100 * value / spent:5.0f} %" if value > 0 and spent > 0 else "    —"
        note = "  (gives power)" if value < 0 else ""
        print(f"  {term:<10} {value:7.0f} W   {share}{note}")
    if bearings:
        print("\n  rolling includes wheel-bearing friction (Dahn et al. 1991).")
    return 0


def _route_plan(args):
    """Read, analyse and plan one route from the ``route`` command's options."""
    from cardgen.physics.atmosphere import Conditions
    from cardgen.plan import make_plan
    from cardgen.profiles.riders import Rider
    from cardgen.profiles.vehicles import find_vehicle
    from cardgen.route.gpx import read_gpx
    from cardgen.route.terrain import build_terrain
    from cardgen.units import celsius_to_kelvin, kmh_to_ms

    for name in ("power", "target_speed", "wind", "wind_from", "temperature"):
        _finite(getattr(args, name), "--" + name.replace("_", "-"))
    vehicle = find_vehicle(args.vehicle)
    power = vehicle.typical_power if args.power is None else args.power
    _ensure(1 <= power <= 2000, f"--power {power} W is outside 1…2000 W")
    target = vehicle.climb_speed if args.target_speed is None else float(kmh_to_ms(args.target_speed))
    _ensure(1 / 3.6 <= target <= 60 / 3.6, f"--target-speed {args.target_speed} km/h is outside 1…60 km/h")
    _ensure(0 <= args.wind <= WIND_LIMIT_KMH, f"--wind {args.wind} km/h is outside 0…{WIND_LIMIT_KMH:g} km/h")
    _ensure(0 <= args.wind_from <= 360, f"--wind-from {args.wind_from}° is outside 0…360°")
    temperature = None
    if args.temperature is not None:
        _ensure(-30 <= args.temperature <= 50, f"--temperature {args.temperature} °C is outside -30…50 °C")
        temperature = float(celsius_to_kelvin(args.temperature))
    conditions = Conditions(float(kmh_to_ms(args.wind)), math.radians(args.wind_from), temperature)
    rider = Rider.for_vehicle(vehicle, flat_power=power, climb_power=power, target_speed=target)
    track = read_gpx(args.gpx)
    terrain = build_terrain(track)
    return make_plan(track, terrain, rider, conditions)


def cmd_route(args) -> int:
    from cardgen.render.exports import route_json
    from cardgen.render.format import duration
    from cardgen.render.notices import notice_text

    plan = _route_plan(args)
    data = route_json(plan)
    if args.json:
        print(json.dumps(data, indent=2, ensure_ascii=False))
        return 0
    r, v, t = data["route"], plan.rider.vehicle, data["totals"]
    print(f"{r['name']}: {r['distance_km']:.1f} km, +{r['gain_m']:.0f} m / -{r['loss_m']:.0f} m")
    print(
        f"{v.label} ({v.name}), {v.mass:.0f} kg, at {plan.rider.flat_power:.0f} W; "
        f"climb target {plan.rider.target_speed * 3.6:.1f} km/h"
    )
    print()
    if data["climbs"]:
        print(" #   km        length  gain  avg   max   FIETS band       W@target  km/h  time")
        for i, c in enumerate(data["climbs"], 1):
            print(
                f"{i:2}  {c['start_km']:5.1f}-{c['end_km']:<5.1f} {c['length_m']:6.0f} m {c['gain_m']:4.0f}m "
                f"{c['avg_grade_pct']:4.1f}% {c['max_grade_pct']:4.1f}% {c['score']:5.2f} "
                f"{c['band']:<10} {c['power_for_target_w']:6.0f} W {c['speed_at_effort_kmh']:5.1f} "
                f"{duration(c['time_s']):>5}"
            )
            if c["assist_level"] is not None:
                print(f"      assist: {c['assist_level']}")
            for w in c["warnings"]:
                print(f"      ! {w}")
    else:
        print("No climbs.")
    print()
    if data["descents"]:
        print(" #   km          drop  avg     coasting   gravity")
        for i, d in enumerate(data["descents"], 1):
            print(
                f"{i:2}  {d['start_km']:5.1f}-{d['end_km']:<5.1f} {d['drop_m']:5.0f} m {d['avg_grade_pct']:5.1f}% "
                f"{d['coast_speed_kmh']:6.0f} km/h {-d['gravity_power_w']:6.0f} W from gravity"
            )
            for w in d["warnings"]:
                print(f"      ! {w}")
    else:
        print("No descents.")
    print()
    battery = "" if t["battery_wh"] is None else f", battery about {t['battery_wh']:.0f} Wh"
    print(
        f"Moving time {duration(t['time_s'])}, work {t['energy_kj']:.0f} kJ, "
        f"food about {t['food_kcal']:.0f} kcal{battery}"
    )
    turns = sum(1 for c in plan.cues if c.cue.kind == "turn")
    print(f"{len(plan.cues)} cues ({turns} turns)")
    for w in plan.warnings:
        print(f"note: {notice_text(w)}")
    print("\nModel estimates, not guarantees. Ride descents to the conditions; local road rules apply.")
    return 0


def _site_config(target: str | None):
    """The configuration for ``build``/``check``: the bundled demo, a site.toml, or a
    folder (with or without site.toml)."""
    from pathlib import Path

    from cardgen.config import folder_config, load_config

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
        print(f"card {done}/{total}: {label}", file=sys.stderr)

    return plain, lambda: None


def cmd_build(args) -> int:
    import os
    from pathlib import Path

    from cardgen.build import build_site

    config, demo = _site_config(args.site)
    for warning in config.warnings:
        print(f"cardgen: warning: {warning}", file=sys.stderr)
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
            say=lambda text: print(text, file=sys.stderr),
            progress=progress,
        )
    finally:
        close()
    if not report.up_to_date:
        print(
            f"built {out}: {report.routes - len(report.failed)} of {report.routes} routes "
            f"({report.routes_reused} unchanged), {report.cards_rendered} cards rendered, {report.cards_reused} reused"
        )
    if report.failed:
        print(f"cardgen: {len(report.failed)} route(s) failed and were left out:", file=sys.stderr)
        for failure in report.failed:
            print(f"  {failure}", file=sys.stderr)
    print(f"open {out / 'index.html'}")
    return 1 if report.failed else 0


def cmd_check(args) -> int:
    from cardgen.route.gpx import read_gpx
    from cardgen.route.terrain import build_terrain

    config, _ = _site_config(args.site)
    for warning in config.warnings:
        print(f"cardgen: warning: {warning}", file=sys.stderr)
    problems = []
    for route in config.routes:
        try:
            track = read_gpx(route.gpx)
            terrain = build_terrain(track)
            print(f"ok  {route.gpx.name}: {terrain.length / 1000:.1f} km, {track.points} points")
        except CardgenError as exc:
            problems.append(str(exc))
    print(f"{len(config.riders)} riders: " + ", ".join(r.rider.name for r in config.riders))
    if problems:
        raise CardgenError("\n  ".join(["route problems:"] + problems))
    print("configuration and routes are fine; nothing was written")
    return 0


def _watched_files(config) -> tuple:
    """What a watched site is made of: the config, its routes, its own templates."""
    from pathlib import Path

    paths = [r.gpx for r in config.routes]
    if config.source is not None:
        paths.append(config.source)
    if config.templates:
        paths.extend(p for p in Path(config.templates).rglob("*") if p.is_file())
    state = []
    for path in sorted(paths):
        try:
            st = path.stat()
            state.append((str(path), st.st_mtime_ns, st.st_size))
        except OSError:
            state.append((str(path), None, None))
    return tuple(state)


def _watch(args, out, stop, seen) -> None:
    """Rebuild the site whenever its files change from ``seen`` (taken before the first
    build), until ``stop`` is set. A failed rebuild is reported and the last good site
    stays served (builds are atomic)."""
    from cardgen.build import build_site

    while not stop.wait(1.0):
        try:
            config, _ = _site_config(args.watch)
            now = _watched_files(config)
            if now == seen:
                continue
            seen = now
            print("change seen: rebuilding", file=sys.stderr, flush=True)
            build_site(config, out, jobs=1, pdf=not args.no_pdf)
            print(f"rebuilt {out}", file=sys.stderr, flush=True)
        except (CardgenError, OSError) as exc:
            print(f"cardgen: error: {exc}; still serving the last good site", file=sys.stderr, flush=True)


def cmd_serve(args) -> int:
    import functools
    import threading
    from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer
    from pathlib import Path

    if args.watch is not None:
        from cardgen.build import build_site

        config, demo = _site_config(args.watch)
        seen = _watched_files(config)  # before building: a change from now on is caught
        folder = Path(args.folder).resolve() if args.folder else config.output
        build_site(config, folder, jobs=1, pdf=not args.no_pdf)
    else:
        folder = Path(args.folder or "site").resolve()
    _ensure(folder.is_dir(), f"{folder}: no such folder; build the site first (cardgen build)")
    handler = functools.partial(SimpleHTTPRequestHandler, directory=str(folder))
    try:
        server = ThreadingHTTPServer(("127.0.0.1", args.port), handler)
    except OSError as exc:
        raise CardgenError(f"cannot listen on 127.0.0.1:{args.port} ({exc.strerror}); try --port") from None
    stop = threading.Event()
    if args.watch is not None:
        threading.Thread(target=_watch, args=(args, folder, stop, seen), daemon=True).start()
    print(f"serving {folder} at http://127.0.0.1:{server.server_address[1]}/ (Ctrl-C stops)", flush=True)
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
    print(f"{'name':<16} {'wheels':>6} {'mass kg':>8} {'CdA m²':>7} {'Crr':>7} {'drive':>6}  description")
    for v in library.values():
        print(
            f"{v.name:<16} {v.wheels:>6} {v.mass:>8.0f} {v.cda:>7.2f} {v.crr:>7.4f} "
            f"{v.efficiency * 100:>5.1f}%  {v.label}"
        )
    print("\nmass is vehicle + rider(s). Sources of every value: cardgen vehicles --json")
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
        help="rider power held along the route (default: the vehicle's typical power)",
    )
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
        help="preview a built site on http://127.0.0.1",
        description="Serve a built site on 127.0.0.1 for preview.",
    )
    serve.add_argument("folder", nargs="?", metavar="OUT", help="the built site (default: site)")
    serve.add_argument(
        "--port",
        type=_ranged(0, 65535, "0: any free port"),
        default=8000,
        metavar="N",
        help="port on 127.0.0.1 (0: any free)",
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


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return args.run(args)
    except CardgenError as exc:
        print(f"cardgen: error: {exc}", file=sys.stderr)
        return 1
    except OSError as exc:  # the machine's side: disk full, permissions, a vanished folder
        where = f"{exc.filename}: " if exc.filename else ""
        print(
            f"cardgen: error: {where}{exc.strerror or exc}; nothing was published, the previous output is "
            "unchanged",
            file=sys.stderr,
        )
        return 1
    except KeyboardInterrupt as exc:
        message = getattr(
            exc, "message", "interrupted; nothing was published, the previous output is unchanged"
        )
        print(f"cardgen: {message}", file=sys.stderr)
        return 130
