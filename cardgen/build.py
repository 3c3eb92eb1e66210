"""The pipeline: plan every route × rider first, then render into a temporary folder
beside the output and swap it into place.

A failed build publishes nothing and leaves the previous site as it was. A lock file
beside the output stops two builds writing into one folder. A manifest of content
hashes (inputs, configuration, templates, cardgen version) lets a rebuild reuse every
route whose inputs did not change, and skip the whole build when nothing did.
"""

from __future__ import annotations

import contextlib
import fcntl
import hashlib
import json
import os
import shutil
import time
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path

from cardgen import __version__
from cardgen.config import SiteConfig, rider_start
from cardgen.errors import CardgenError

MANIFEST = "manifest.json"


class BuildError(CardgenError):
    """The build failed; nothing was published."""


@dataclass
class BuildReport:
    routes: int = 0
    routes_reused: int = 0
    cards_rendered: int = 0
    cards_reused: int = 0
    up_to_date: bool = False
    failed: list[str] = field(default_factory=list)
    seconds: dict[str, float] = field(default_factory=dict)


def _digest(*parts) -> str:
    h = hashlib.sha256()
    for part in parts:
        h.update(part if isinstance(part, bytes) else str(part).encode("utf-8"))
        h.update(b"\0")
    return h.hexdigest()


def _templates_digest(config: SiteConfig) -> str:
    from cardgen.render.html import default_templates

    h = hashlib.sha256()
    for folder in ([config.templates] if config.templates else []) + [default_templates()]:
        # the templates themselves, not the byte code Python leaves beside the package's __init__
        for path in sorted(p for p in Path(folder).rglob("*")
                           if p.is_file() and "__pycache__" not in p.parts and p.suffix != ".pyc"):
            h.update(str(path.relative_to(folder)).encode() + b"\0" + path.read_bytes() + b"\0")
    return h.hexdigest()


def check_output(config: SiteConfig, out: Path) -> Path:
    """Refuse an output folder that would overwrite the sources, /, or a home folder."""
    out = Path(out).resolve()
    home = Path.home().resolve()
    sources = {config.folder.resolve(), *(r.gpx.resolve().parent for r in config.routes)}
    if config.source is not None:
        sources.add(config.source.resolve().parent)
    if out == Path(out.anchor) or out == home:
        raise BuildError(f"output folder {out} is / or your home folder; choose a folder of its own, e.g. -o site")
    for src in sources:
        if out == src or out in src.parents:
            raise BuildError(f"output folder {out} holds the sources ({src}); choose another, e.g. -o {src / 'site'}")
    return out


class Lock:
    """An exclusive lock file beside the output; released when the process ends,
    however it ends."""

    def __init__(self, out: Path):
        self.path = out.parent / f".{out.name}.cardgen-lock"
        self.handle = None

    def __enter__(self):
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.handle = open(self.path, "a+")
        try:
            fcntl.flock(self.handle, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            self.handle.close()
            raise BuildError(f"another cardgen build is writing to {self.path.parent / self.path.name[1:-14]} "
                             f"(lock {self.path}); wait for it to finish") from None
        return self

    def __exit__(self, *exc):
        fcntl.flock(self.handle, fcntl.LOCK_UN)
        self.handle.close()


def _remove_stale(out: Path) -> None:
    """Temporary folders of builds that died (their process is gone)."""
    for path in out.parent.glob(f".{out.name}.cardgen-*-*"):
        try:
            pid = int(path.name.rsplit("-", 1)[1])
        except ValueError:
            continue
        try:
            os.kill(pid, 0)
            alive = pid != os.getpid()
        except OSError:
            alive = False
        if not alive and path.is_dir():
            shutil.rmtree(path, ignore_errors=True)


def publish(tmp: Path, out: Path) -> None:
    """Swap the finished folder into place: the old site is moved aside, the new one
    renamed in, then the old one removed. If the second rename fails the old site is
    put back."""
    old = out.parent / f".{out.name}.cardgen-old-{os.getpid()}"
    if out.exists():
        os.rename(out, old)
    try:
        os.rename(tmp, out)
    except OSError:
        if old.exists():
            os.rename(old, out)
        raise
    shutil.rmtree(old, ignore_errors=True)


def _render_pdf(job):
    """Worker: (html, base folder, target) → PDF file."""
    from cardgen.render.pdf import write_pdf

    html, base, target = job
    write_pdf(html, Path(base), Path(target))
    return target


@dataclass
class _RoutePlans:
    config: object
    slug: str
    key: str
    analysis: object = None
    riders: list = field(default_factory=list)  # (RiderConfig, start, Plan)
    name: str = ""
    checkpoints: list = field(default_factory=list)


def build_site(config: SiteConfig, out: Path, *, jobs: int = 1, pdf: bool = True, keep_going: bool = False,
               say=lambda text: None, progress=None) -> BuildReport:
    """Build the site of ``config`` into ``out``. ``say`` receives one line per step;
    ``progress(done, total, label)`` is called as cards are rendered."""
    out = check_output(config, out)
    report = BuildReport()
    with Lock(out):
        _remove_stale(out)
        return _build_locked(config, out, jobs, pdf, keep_going, say, progress, report)


def _pool(jobs: int, tasks: int):
    """A process pool when it pays (jobs > 1 and more than one task), else a stand-in
    that runs in this process."""
    if jobs > 1 and tasks > 1:
        return ProcessPoolExecutor(max_workers=min(jobs, tasks))
    return contextlib.nullcontext(None)


def _map(pool, function, items, what: str = "a worker process"):
    """``pool.map``, or plain ``map`` without a pool, yielding results in order; a dead
    worker is a clear error."""
    if pool is None:
        yield from map(function, items)
        return
    try:
        yield from pool.map(function, items)
    except BrokenProcessPool:
        raise BuildError(f"{what} died (out of memory, or killed); nothing was published; "
                         "try again with --jobs 1") from None


def _plan_route(task):
    """Worker: read, analyse and plan one route for its riders.

    Returns ((analysis, name, checkpoints, [(RiderConfig, start, Plan)]), None) or
    (None, error message)."""
    from cardgen.plan import analyse, make_plan
    from cardgen.route.gpx import read_gpx
    from cardgen.route.terrain import build_terrain

    rp, config = task
    try:
        track = read_gpx(rp.config.gpx)
        analysis = analyse(track, build_terrain(track))
        checkpoints = _checkpoints(rp, analysis)
        riders = []
        for i, rc in enumerate(config.riders):
            if rc.rides(rp.config, rp.config.name or rp.config.gpx.stem):
                riders.append((rc, rider_start(config, i),
                               make_plan(analysis, rider=rc.rider, conditions=config.conditions)))
        return (analysis, rp.config.name or track.name, checkpoints, riders), None
    except CardgenError as exc:
        return None, (f"{rp.config.gpx}: {exc}" if str(rp.config.gpx) not in str(exc) else str(exc))


def _build_locked(config, out, jobs, pdf, keep_going, say, progress, report):
    from cardgen.render.html import slugify

    t0 = time.perf_counter()
    templates = _templates_digest(config)
    shared = _digest(__version__, templates, config.title, config.units, config.card_size, config.large_print,
                     config.base_url, config.start, config.start_interval, config.checkpoint_margin,
                     config.conditions, pdf, os.environ.get("SOURCE_DATE_EPOCH", ""))
    old = _read_manifest(out)
    taken: set[str] = set()
    routes = []
    for rc in config.routes:
        slug = slugify(rc.name or rc.gpx.stem, taken)
        riders = [(i, r) for i, r in enumerate(config.riders) if r.rides(rc, rc.name or rc.gpx.stem)]
        key = _digest(shared, rc.gpx.read_bytes(), rc.name, rc.notes, rc.checkpoints,
                      *[(i, r.rider) for i, r in riders])
        routes.append(_RoutePlans(rc, slug, key))
    site_key = _digest(shared, *[r.key for r in routes], *[r.slug for r in routes])
    report.routes = len(routes)
    if old.get("site_key") == site_key and all((out / r.slug).is_dir() for r in routes):
        report.up_to_date = True
        report.routes_reused = len(routes)
        report.cards_reused = sum(len(v.get("cards", [])) for v in old.get("routes", {}).values())
        say(f"{out}: up to date ({len(routes)} routes, {report.cards_reused} cards unchanged)")
        return report

    # Phase 1: plan every route that changed (in the process pool when jobs > 1).
    todo = [rp for rp in routes
            if not (old.get("routes", {}).get(rp.slug, {}).get("key") == rp.key and (out / rp.slug).is_dir())]
    failures = []
    with _pool(jobs, len(todo)) as pool:
        for rp, (result, error) in zip(todo, _map(pool, _plan_route, [(rp, config) for rp in todo]), strict=True):
            if error:
                failures.append(error)
            else:
                rp.analysis, rp.name, rp.checkpoints, rp.riders = result
                say(f"planned {rp.name}: {len(rp.riders)} riders")
    report.seconds["plan"] = time.perf_counter() - t0
    if failures and not keep_going:
        raise BuildError("the build stopped; nothing was published (the previous site is unchanged):\n  "
                         + "\n  ".join(failures))
    report.failed = failures

    # Phase 2: render into a temporary folder beside the output, then swap it in.
    tmp = out.parent / f".{out.name}.cardgen-tmp-{os.getpid()}"
    shutil.rmtree(tmp, ignore_errors=True)
    tmp.mkdir(parents=True)
    try:
        with _pool(jobs, len(routes) + 1) as pool:
            manifest = _render(config, routes, old, out, tmp, pool, pdf, say, progress, report, failures)
        manifest["site_key"] = site_key if not failures else ""
        (tmp / MANIFEST).write_text(json.dumps(manifest, indent=1, sort_keys=True) + "\n", encoding="utf-8")
        publish(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    report.seconds["total"] = time.perf_counter() - t0
    return report


def _read_manifest(out: Path) -> dict:
    try:
        data = json.loads((out / MANIFEST).read_text(encoding="utf-8"))
        return data if isinstance(data, dict) else {}
    except (OSError, ValueError):
        return {}


def _built_stamp() -> str:
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if not epoch:
        return ""
    try:
        return "built " + datetime.fromtimestamp(int(epoch), tz=UTC).strftime("%Y-%m-%d")
    except (ValueError, OverflowError, OSError):
        return ""


def _site_context(config) -> dict:
    built = _built_stamp()
    event_line = ""
    if config.start is not None:
        event_line = f"Start {config.start.strftime('%A %d %B %Y, %H:%M')}"
        if config.start_interval:
            event_line += f", riders {config.start_interval / 60:.0f} min apart"
    return {"title": config.title, "units": config.units, "large_print": config.large_print, "built": built,
            "event_line": event_line, "card_size": config.card_size}


_ENVIRONMENTS: dict = {}


def _environment(config):
    """One Jinja2 environment per process and template folder."""
    from cardgen.render.html import environment

    key = (config.templates, config.units)
    if key not in _ENVIRONMENTS:
        _ENVIRONMENTS[key] = environment(config.templates, config.units)
    return _ENVIRONMENTS[key]


def _render_route_task(task):
    """Worker: pages, plots and exports of one route; returns (manifest entry, card jobs)."""
    config, rp, folder = task
    return _render_route(_environment(config), config, _site_context(config), rp, Path(folder))


def _render(config, routes, old, out, tmp, pool, pdf, say, progress, report, failures):
    env = _environment(config)
    site = _site_context(config)
    manifest = {"version": __version__, "routes": {}}
    jobs_list = []
    t_render = time.perf_counter()
    fresh = []
    for rp in routes:
        previous = old.get("routes", {}).get(rp.slug, {})
        if rp.analysis is None:
            if previous.get("key") == rp.key and (out / rp.slug).is_dir():
                shutil.copytree(out / rp.slug, tmp / rp.slug, copy_function=os.link)
                manifest["routes"][rp.slug] = previous
                report.routes_reused += 1
                report.cards_reused += len(previous.get("cards", []))
            continue  # a failed route (with --keep-going) is left out
        (tmp / rp.slug).mkdir()
        fresh.append(rp)
    for rp, (entry, route_jobs) in zip(fresh, _map(pool, _render_route_task,
                                                   [(config, rp, str(tmp / rp.slug)) for rp in fresh]), strict=True):
        manifest["routes"][rp.slug] = entry
        jobs_list.extend(route_jobs if pdf else [])
    report.seconds["html"] = time.perf_counter() - t_render

    t_pdf = time.perf_counter()
    total = len(jobs_list)
    for done, target in enumerate(_map(pool, _render_pdf, jobs_list, "a card-rendering process"), 1):
        if progress:
            progress(done, total, Path(target).relative_to(tmp).as_posix())
    report.cards_rendered = total
    report.seconds["pdf"] = time.perf_counter() - t_pdf

    summaries = [manifest["routes"][rp.slug]["summary"] for rp in routes if rp.slug in manifest["routes"]]
    rider_names = [r.rider.name for r in config.riders]
    (tmp / "index.html").write_text(env.get_template("index.html").render(
        site=site, routes=summaries, rider_names=rider_names, root="", version=__version__), encoding="utf-8")
    from cardgen.render.html import default_templates

    css = (config.templates / "style.css") if config.templates and (config.templates / "style.css").is_file() \
        else default_templates() / "style.css"
    shutil.copyfile(css, tmp / "style.css")
    if failures:
        say(f"{len(failures)} route(s) failed and were left out (--keep-going)")
    return manifest


def _render_route(env, config, site, rp, folder: Path):
    """Pages, plots, exports and card jobs of one route; returns (manifest entry, jobs)."""
    from cardgen.plan import checkpoint_windows
    from cardgen.render import exports, plots
    from cardgen.render import format as fmt
    from cardgen.render.html import RiderView, slugify, symbols_for

    analysis = rp.analysis
    terrain = analysis.terrain
    units = config.units
    checkpoints = rp.checkpoints
    profile_svg, profile_alt = plots.elevation_profile(
        terrain, analysis.climbs, [(c.name, c.distance) for c in checkpoints], units, name=rp.name)
    (folder / "profile.svg").write_text(profile_svg, encoding="utf-8")
    card_profile = "profile.svg"
    if config.large_print:  # the card's own profile, with labels at large-print size
        big_svg, _ = plots.elevation_profile(terrain, analysis.climbs, [(c.name, c.distance) for c in checkpoints],
                                             units, name=rp.name, width_in=5.2, height_in=3.0, text_scale=1.9)
        (folder / "profile-large.svg").write_text(big_svg, encoding="utf-8")
        card_profile = "profile-large.svg"
    power_svg = power_alt = ""
    if analysis.climbs and rp.riders:
        hardest = max(analysis.climbs, key=lambda h: h.score)
        index = analysis.climbs.index(hardest)
        power_svg, power_alt = plots.power_curves(
            [(rc.rider.name, rc.rider, hardest, plan.climbs[index]) for rc, _, plan in rp.riders], units)
        (folder / "power.svg").write_text(power_svg, encoding="utf-8")
    taken: set[str] = set()
    views = []
    for rc, start, plan in rp.riders:
        slug = slugify(rc.rider.name, taken)  # unique within the route: it names the card file
        views.append(RiderView(rc.rider.name, slug, plan, f"{slug}.pdf", start))
    plans = [v.plan for v in views]
    windows, margin_text = [], ""
    if plans and config.start is not None:
        windows, _ = checkpoint_windows(plans, checkpoints, config.start, config.checkpoint_margin)
        margin_text = f"{config.checkpoint_margin / 60:.0f} min"
    route = {
        "name": rp.name, "notes": rp.config.notes, "distance": terrain.length, "gain": terrain.gain,
        "loss": terrain.loss, "climbs": analysis.climbs, "descents": analysis.descents, "cues": analysis.cues,
        "start": config.start, "start_text": config.start.strftime("%H:%M") if config.start else "",
    }
    common = dict(site=site, route=route, units=units, version=__version__, symbols_for=symbols_for)
    (folder / "index.html").write_text(env.get_template("route.html").render(
        **common, riders=views, profile_alt=profile_alt, power_svg=bool(power_svg), power_alt=power_alt,
        windows=windows, margin_text=margin_text, root="../"), encoding="utf-8")
    (folder / "plan.json").write_text(exports.route_json_text(rp.name, plans), encoding="utf-8")
    (folder / "climbs.csv").write_text(exports.climbs_csv_text(plans), encoding="utf-8")
    (folder / "route.gpx").write_text(exports.route_gpx_text(analysis.track, terrain, analysis.climbs,
                                                             checkpoints), encoding="utf-8")
    qr = ""
    if config.base_url:
        import segno

        qr = config.base_url.rstrip("/") + f"/{rp.slug}/index.html"
        segno.make(qr, error="m").save(str(folder / "qr.svg"), kind="svg", border=1, xmldecl=False)
    page = _page(config)
    jobs = []
    for view in views:
        html = env.get_template("card.html").render(**common, rider=view, plan=view.plan, start=view.start,
                                                    profile_alt=profile_alt, profile=card_profile, page=page, qr=qr)
        jobs.append((html, str(folder), str(folder / view.card)))
    if views:
        html = env.get_template("coach.html").render(**common, riders=views)
        jobs.append((html, str(folder), str(folder / "coach.pdf")))
    hardest = max(analysis.climbs, key=lambda h: h.score) if analysis.climbs else None
    summary = {
        "name": rp.name, "slug": rp.slug, "distance": terrain.length, "gain": terrain.gain,
        "hardest": (f"{fmt.length(hardest.length, units)} at {fmt.grade(hardest.avg_grade)} ({hardest.band})"
                    if hardest else "none"),
        "times": {v.name: v.plan.totals.time for v in views},
    }
    entry = {"key": rp.key, "summary": summary, "cards": [v.card for v in views] + (["coach.pdf"] if views else [])}
    return entry, jobs


def _checkpoints(rp, analysis):
    """The route's checkpoints: as configured (waypoint names or km), else the
    waypoints typed "checkpoint"."""
    from cardgen.plan import Checkpoint
    from cardgen.plan import checkpoints_from_waypoints as from_waypoints

    if not rp.config.checkpoints:
        return from_waypoints(analysis.track, analysis.terrain)
    by_name = {c.name: c for c in from_waypoints(analysis.track, analysis.terrain)}
    names = {w.name for w in analysis.track.waypoints}
    out = []
    for item in rp.config.checkpoints:
        if isinstance(item, str):
            if item in by_name:
                out.append(by_name[item])
            elif item in names:
                from cardgen.route.cues import place_points

                cues, _ = place_points(analysis.terrain, [w for w in analysis.track.waypoints if w.name == item],
                                       "waypoint")
                out.extend(Checkpoint(c.text, c.distance) for c in cues)
            else:
                raise CardgenError(f"checkpoint {item!r} is not a waypoint of {rp.config.gpx}; "
                                   "use a waypoint name or a distance in km")
        else:
            if not 0 <= item <= analysis.terrain.length:
                raise CardgenError(f"checkpoint at {item / 1000:g} km is beyond the route's "
                                   f"{analysis.terrain.length / 1000:.1f} km")
            out.append(Checkpoint(f"Checkpoint at {item / 1000:g} km", float(item)))
    return sorted(out, key=lambda c: c.distance)


def _page(config):
    """Card page geometry and type sizes for the configured size and print."""
    sizes = {"A5": ("A5 portrait", "9mm", "9pt"), "A4": ("A4 portrait", "12mm", "10pt"),
             "pocket": ("99mm 210mm", "5mm", "8pt")}
    size, margin, font = sizes[config.card_size]
    if config.large_print:
        font = "14pt"
    # Large print: the full cautions are a block of body text on page 2 (at 14 pt they
    # would not fit a footer); the footer of every page points to them.
    caution = "12pt" if config.large_print else "6.5pt"
    footer = "16mm" if config.large_print else ("34mm" if config.card_size == "pocket" else "26mm")
    return {"size": size, "margin": margin, "font": font, "caution_font": caution, "footer": footer,
            "large": config.large_print, "narrow": config.large_print or config.card_size == "pocket"}
