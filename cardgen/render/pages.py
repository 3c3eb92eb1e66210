"""The pages, plots, exports and card sources of a site: everything a build writes,
made from plans and the site's settings (the build only decides what to redo and
where the files go)."""

from __future__ import annotations

import contextlib
import functools
import re
import statistics
import traceback
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import jinja2
import numpy as np

from cardgen import __version__
from cardgen.errors import CardgenError
from cardgen.plan import Plan
from cardgen.plan.model import RouteJob, TimedCue
from cardgen.plan.rider import BATTERY_RESERVE
from cardgen.render import advice, difficulty, exports, plots
from cardgen.render import format as fmt
from cardgen.render.day import day_rows, day_sheet_files
from cardgen.render.html import (
    HOT_C,
    RiderView,
    environment,
    heat_caution,
    slugify,
    symbol_of,
    symbols_for,
    theme_file,
)
from cardgen.render.notices import notice_text
from cardgen.units import ZERO_CELSIUS_K

#: Width [in] of the route page's drawings for a phone: with their labels about 290 CSS px
#: (96 px an inch), the text column of a 320 px screen.
PHONE_WIDTH_IN = 2.8

#: Large print: the route map's labels at the body's 14 pt (its smallest, 7.5 pt,
#: scaled), so the map reads at the same distance as the card.
MAP_TEXT_LARGE = 14 / 7.5

#: Riders on one group of the coach sheet: a group's tables fit a page or two.
COACH_GROUP = 8
#: Groups of the coach sheet laid out together: WeasyPrint holds a whole layout in
#: memory (a 300-rider sheet in one layout peaked at 1.2 GB), so a sheet of more
#: groups is laid out in parts of this many and joined.
COACH_LAYOUT_GROUPS = 5
#: File names of a route folder that a card may not take (a rider called "Coach"
#: gets coach-2.pdf).
RESERVED_CARD_NAMES = frozenset(
    {
        "coach",
        "all-cards",
        "all-cards-2up",
        "index",
        "plan",
        "climbs",
        "route",
        "profile",
        "profile-large",
        "power",
        "qr",
    }
)


@dataclass(frozen=True)
class CardSource:
    """A card to print: its HTML, the folder its links point into, the PDF to make.
    ``variants`` are the same card condensed step by step (:data:`CARD_VARIANTS`) and
    ``budget`` its pages: the first variant that fits is printed. A coach sheet has
    no variants and no budget; one of many riders is laid out in ``parts`` (a few
    groups each, :data:`COACH_LAYOUT_GROUPS`), joined in order."""

    html: str
    base: str
    target: str
    variants: tuple[str, ...] = ()
    budget: int = 0
    group: str = ""  # cards of one group fit alike: the vehicle kind
    assets: tuple[str, ...] = ()  # the build's files (in ``base``) that any variant shows
    parts: tuple[str, ...] = ()  # a document laid out part by part ("html" is the first)


#: The condensing steps of a card, never dropping a cue or the organiser's words on
#: it (a waypoint's description may be "brake before the hairpins"): 1 a descent's
#: notes become its symbols and one line; 2 the cue sheet runs in two columns (A4);
#: 3 the profile and the map are drawn smaller.
CONDENSE_STEPS = 3
#: A card's variants in the order they are tried, as (condensing step, route map on
#: the card): first each step within the page budget; then the most condensed again,
#: allowed a continuation sheet (twice the budget: the card flows on, so its second
#: page is full before the third starts); last, the same with the route map left to
#: the route's web page (a long card with its pacing lines may have no room left for
#: it).
CARD_VARIANTS = (
    *((step, True) for step in range(CONDENSE_STEPS + 1)),
    (CONDENSE_STEPS, True),
    (CONDENSE_STEPS, False),
)
#: The first variant allowed a continuation sheet.
CONTINUATION_STEP = CONDENSE_STEPS + 1


def built_stamp(source_date_epoch: str | None) -> str:
    """ "built YYYY-MM-DD" from SOURCE_DATE_EPOCH, or "" when unset or unusable."""
    if not source_date_epoch:
        return ""
    try:
        return "built " + datetime.fromtimestamp(int(source_date_epoch), tz=UTC).strftime("%Y-%m-%d")
    except (ValueError, OverflowError, OSError):
        return ""


def site_context(config, starts, built: str = "") -> dict:
    """What every page knows of the site, the event's real starts included
    (``starts``: :func:`cardgen.plan.starts.event_starts`): each wave's first and last
    start, and the open start of the riders outside waves."""
    to_second = starts.to_second
    day = config.day.strftime("%A %d %B %Y") if config.day else ""
    parts = []
    for wave in starts.waves:
        if wave.first is None:
            continue
        span = fmt.start_clock(wave.first, to_second)
        if wave.last != wave.first:
            span += "–" + fmt.start_clock(wave.last, to_second)
        apart = fmt.spacing(wave.riders, wave.interval)
        parts.append(f"wave {wave.name} {span} ({wave.riders} rider{'s' if wave.riders != 1 else ''}{apart})")
    if config.start is not None and (starts.open_start or not parts):
        line = f"{'other riders from ' if parts else ''}{fmt.start_clock(config.start, to_second)}"
        if config.start_interval:
            line += f", riders {fmt.gap(config.start_interval)} apart"
        parts.append(line)
    event_line = ""
    if parts:
        event_line = f"Start {day + ': ' if day else ''}" + "; ".join(parts)
    elif day:
        event_line = day
    return {
        "day": day,
        "contact": config.contact,
        "emergency": config.emergency,
        "title": config.title,
        "units": config.units,
        "large_print": config.large_print,
        "built": built,
        "event_line": event_line,
        "card_size": config.card_size,
        "to_second": to_second,
    }


def _start_span(job, to_second: bool) -> str:
    """The route's first and last start ("06:45–07:31"), or "" without starts."""
    starts = sorted(e.start for e in job.riders if e.start is not None)
    if not starts:
        return ""
    first, last = fmt.start_clock(starts[0], to_second), fmt.start_clock(starts[-1], to_second)
    return first if first == last else f"{first}–{last}"


#: Paper [mm] (width, height), margins [mm] (top, sides, bottom), body type size and
#: the page budget of each card size. Every margin is at least 5 mm plus the header
#: or footer line, so nothing prints where most printers cannot (the unprintable
#: edge is commonly 3–5 mm: common practice, no published source).
CARD_SIZES = {
    "A5": ((148, 210), (12, 8, 14), "9pt", 2),
    "A4": ((210, 297), (14, 10, 16), "10pt", 2),
    "pocket": ((99, 210), (12, 6, 14), "9pt", 4),
}


def page_geometry(card_size: str, large_print: bool) -> dict:
    """Card page size, margins, type sizes and page budget for the configured size and
    print. Large print (14 pt body) has twice the pages, like the pocket strip."""
    (width, height), (top, side, bottom), font, budget = CARD_SIZES[card_size]
    if large_print:
        font, budget, bottom = "14pt", 4, bottom + 6
    return {
        "size": f"{width}mm {height}mm",
        "margins": f"{top}mm {side}mm {bottom}mm {side}mm",
        "font": font,
        "footer_font": "12pt" if large_print else "7.5pt",
        "large": large_print,
        "narrow": large_print or card_size == "pocket",
        "budget": budget,
        # the drawings are made at their printed width, so their type prints at size
        "plot_width_in": (width - 2 * side - 8) / 25.4,
        "two_column_cues": width >= 200,
    }


@functools.cache
def _environment(templates: Path | None, units: str):
    """One Jinja2 environment per process, template folder and unit system."""
    return environment(templates, units)


def _hardest(climbs):
    return max(climbs, key=lambda c: c.score) if climbs else None


def _plots(config, job: RouteJob, files: dict[str, str | bytes]) -> dict:
    """The route's SVG plots, added to ``files`` by name; returns what the templates
    need of them."""
    analysis, units = job.analysis, config.units
    marks = [(c.name, c.distance) for c in job.checkpoints]
    svg, alt = plots.elevation_profile(analysis.terrain, analysis.climbs, marks, units, name=job.name)
    files["profile.svg"] = svg
    # the card's own profile and map, drawn at their printed width so that their type
    # prints at its size (large print: labels scaled to match its 14 pt)
    page = page_geometry(config.card_size, config.large_print)
    width = page["plot_width_in"]
    scale = 1.6 if config.large_print else 1.0
    # a full and a smaller size of each, for the condensing steps (drawn, not shrunk,
    # so the type keeps its size)
    for suffix, share in (("", 1.0), ("-small", 0.45)):
        # large print keeps a map that reads: its smaller drawing loses a quarter
        map_share = 0.75 if config.large_print and share < 1.0 else share
        card_svg, _ = plots.elevation_profile(
            analysis.terrain,
            analysis.climbs,
            marks,
            units,
            name=job.name,
            width_in=width,
            height_in=min(2.0, 0.38 * width) * scale * share,
            text_scale=scale,
        )
        files[f"card-profile{suffix}.svg"] = card_svg
        map_svg, map_alt = plots.route_map(
            analysis.terrain,
            analysis.climbs,
            marks,
            units,
            name=job.name,
            width_in=width,
            height_in=0.45 * width * map_share,
            text_scale=MAP_TEXT_LARGE if config.large_print else 1.0,
        )
        files[f"map{suffix}.svg"] = map_svg
    card_profile = "card-profile.svg"
    # the route page's drawings for a phone: narrow enough to show at their drawn
    # size, so that their smallest type (7.5 pt) stays 10 CSS px
    phone = PHONE_WIDTH_IN
    files["profile-phone.svg"], _ = plots.elevation_profile(
        analysis.terrain, analysis.climbs, marks, units, name=job.name, width_in=phone, height_in=0.7 * phone
    )
    files["map-phone.svg"], _ = plots.route_map(
        analysis.terrain, analysis.climbs, marks, units, name=job.name, width_in=phone, height_in=phone
    )
    power_svg = power_alt = ""
    hardest = _hardest(analysis.climbs)
    if hardest is not None and job.riders:
        index = analysis.climbs.index(hardest)
        rows = [(e.name, e.plan.climbs[index]) for e in job.riders]
        kinds = [e.plan.rider.vehicle.label for e in job.riders]
        power_svg, power_alt = plots.power_curves(rows, units, kinds=kinds)
        files["power.svg"] = power_svg
        files["power-phone.svg"], _ = plots.power_curves(
            rows, units, kinds=kinds, width_in=phone, height_in=0.75 * phone, legend_below=True
        )
    return {
        "profile_alt": alt,
        "card_profile": card_profile,
        "map": "map.svg",
        "map_small": "map-small.svg",
        "profile_small": "card-profile-small.svg",
        "map_alt": map_alt,
        "power_svg": bool(power_svg),
        "power_alt": power_alt,
    }


def _exports(
    config,
    job: RouteJob,
    plans: list[Plan],
    windows: list,
    files: dict[str, str | bytes],
    to_second: bool = False,
) -> str:
    """plan.json, climbs.csv, route.gpx and the QR code, added to ``files``; returns
    the QR's target URL."""
    analysis = job.analysis
    files["plan.json"] = exports.plan_json_text(
        job.name,
        plans,
        job.riders,
        windows,
        dated=config.day is not None,
        to_second=to_second,
        points=job.points,
    )
    files["climbs.csv"] = exports.climbs_csv_text(plans)
    files["route.gpx"] = exports.route_gpx_text(
        analysis.track, analysis.terrain, analysis.climbs, job.checkpoints
    )
    if not config.base_url:
        return ""
    import io

    import segno

    qr = config.base_url.rstrip("/") + f"/{job.slug}/index.html"
    buffer = io.BytesIO()
    segno.make(qr, error="m").save(buffer, kind="svg", border=1, xmldecl=False)
    files["qr.svg"] = buffer.getvalue()
    return qr


@contextlib.contextmanager
def theme_errors(templates: Path | None) -> Iterator[None]:
    """A mistake in a template becomes one CardgenError naming the file and line."""
    try:
        yield
    except jinja2.TemplateSyntaxError as exc:
        raise CardgenError(
            f"{exc.filename or exc.name}, line {exc.lineno}: {exc.message}; fix the template"
        ) from None
    except jinja2.TemplateError as exc:
        frames = [f for f in traceback.extract_tb(exc.__traceback__) if not f.filename.endswith(".py")]
        where = f"{frames[-1].filename}, line {frames[-1].lineno}" if frames else f"templates in {templates}"
        raise CardgenError(f"{where}: {exc.message or type(exc).__name__}; fix the template") from None


@dataclass(frozen=True)
class RoutePages:
    """What a route's folder holds, made in memory: ``files`` by name (text or bytes),
    its ``summary`` for the index, and the ``cards`` to print there."""

    files: dict[str, str | bytes]
    summary: dict
    cards: list[CardSource]


def _margin_text(config, job: RouteJob) -> str:
    """The sentence that says how the checkpoints' windows were set ("" without
    windows)."""
    units = config.units
    margin_text = ""
    if job.windows:
        if config.speed_rule:
            slowest, fastest = config.speed_rule
            margin_text = (
                f"open at the first start plus the distance at {fmt.speed(fastest, units)} average, close at "
                f"the last start plus the distance at {fmt.speed(slowest, units, 'down')} average"
            )
        else:
            margin_text = (
                f"{config.checkpoint_margin / 60:.0f} min before the fastest and after the slowest rider "
                "planned here, stops included"
            )
    return margin_text


def render_route(config, site: dict, job: RouteJob, folder: Path) -> RoutePages:
    """A route's page, plots and exports, its summary for the index and the cards to
    print; ``folder`` is where the build will put them (the cards' links point there).
    Nothing is written."""
    with theme_errors(config.templates):
        return _render_route(config, site, job, folder)


def _render_route(config, site: dict, job: RouteJob, folder: Path) -> RoutePages:
    env = _environment(config.templates, config.units)
    analysis, terrain, units = job.analysis, job.analysis.terrain, config.units
    files: dict[str, str | bytes] = {}
    figures = _plots(config, job, files)
    taken = set(RESERVED_CARD_NAMES)
    views: list[RiderView] = []
    for e in job.riders:
        slug = slugify(e.name, taken)  # unique within the route: it names the card file
        views.append(RiderView(e.name, slug, e.plan, f"{slug}.pdf", e.start, e.bib, e.wave))
    plans: list[Plan] = [v.plan for v in views]
    windows, margin_text = list(job.windows), _margin_text(config, job)
    route = {
        "name": job.name,
        "notes": job.notes,
        "distance": terrain.length,
        "gain": terrain.gain,
        "loss": terrain.loss,
        "climbs": analysis.climbs,
        "descents": analysis.descents,
        "cues": analysis.cues,
        "start": config.start or any(e.start for e in job.riders),
        "start_text": _start_span(job, site.get("to_second", False)),
    }
    hot = config.conditions.temperature
    hot_caution = (
        heat_caution(hot - ZERO_CELSIUS_K) if hot is not None and hot - ZERO_CELSIUS_K >= HOT_C else ""
    )
    common = dict(
        site=site,
        route=route,
        units=units,
        version=__version__,
        symbols_for=symbols_for,
        effort_line=functools.partial(advice.effort_line, units=units),
        climb_advice=functools.partial(advice.climb_advice, units=units),
        descent_advice=functools.partial(advice.descent_advice, units=units),
        descents_advice=functools.partial(advice.descents_advice, units=units),
        climbs_advice=functools.partial(advice.climbs_advice, units=units),
        hot_caution=hot_caution,
        conditions=config.conditions,  # the weather every figure assumes
    )
    files["index.html"] = env.get_template("route.html").render(
        **common,
        riders=views,
        overview=route_overview(job, views, site.get("to_second", False)),
        profile_alt=figures["profile_alt"],
        map_alt=figures["map_alt"],
        power_svg=figures["power_svg"],
        power_alt=figures["power_alt"],
        windows=windows,
        margin_text=margin_text,
        root="../",
    )
    qr = _exports(config, job, plans, windows, files, site.get("to_second", False))
    page = page_geometry(config.card_size, config.large_print)
    card_template = env.get_template("card.html")
    cards = []
    for view, entry in zip(views, job.riders, strict=True):
        watch = watch_list(view.plan, units)
        # a descent's warning said in the "Watch for" box is not said again beside the table
        said = {item["code"] for item in watch} & {"fast"}
        context = dict(
            **common,
            rider=view,
            plan=view.plan,
            start=view.start,
            profile_alt=figures["profile_alt"],
            profile=figures["card_profile"],
            map=figures["map"],
            map_small=figures["map_small"],
            profile_small=figures["profile_small"],
            map_alt=figures["map_alt"],
            page=page,
            qr=qr,
            windows=windows,
            legs=entry.legs,
            fuel_rates=entry.fuel_rates,
            watch=watch,
            watch_codes={"battery", "stall"},
            cue_rows=cue_rows(view.plan),
            descent_brief=functools.partial(descent_brief, units=units, skip=said, each=False),
            descent_notes=functools.partial(descent_notes, skip=said),
            short_name=short_name,
            descents_brief=functools.partial(descents_brief, units=units, skip=said, each=False),
            warnings_brief=functools.partial(
                warnings_brief, units=units, skip={"battery", "stall"}, each=False
            ),
        )
        # a continuation variant is the same HTML as its step within the budget (the
        # card flows on), so the fitter measures each step once
        html_of = {
            key: card_template.render(**context, condense=key[0], map_on_card=key[1])
            for key in dict.fromkeys(CARD_VARIANTS)
        }
        variants = tuple(html_of[key] for key in CARD_VARIANTS)
        assets = (
            *(["qr.svg"] if qr else []),
            figures["card_profile"],
            figures["profile_small"],
            figures["map"],
            figures["map_small"],
        )
        cards.append(
            CardSource(
                variants[0],
                str(folder),
                str(folder / view.card),
                variants,
                page["budget"],
                view.plan.rider.vehicle.name,
                assets,
            )
        )
    coach = _coach_source(env, common, views, job, folder, units)
    if coach is not None:
        cards.append(coach)
    summary = route_summary(job, views, units, site.get("to_second", False))
    summary["day"] = day_rows(job.name, job.day, site.get("to_second", False))
    return RoutePages(files, summary, cards)


def _coach_source(
    env: jinja2.Environment,
    common: dict[str, Any],
    views: list[RiderView],
    job: RouteJob,
    folder: Path,
    units: str,
) -> CardSource | None:
    """The coach sheet of a route's riders, by start, in groups of
    :data:`COACH_GROUP`; laid out :data:`COACH_LAYOUT_GROUPS` groups at a time (one
    part each) when it is long. None without riders."""
    if not views:
        return None
    ordered = sorted(views, key=lambda v: (v.start.isoformat() if v.start else "~", v.name))
    groups = [ordered[i : i + COACH_GROUP] for i in range(0, len(ordered), COACH_GROUP)]
    coach = env.get_template("coach.html")
    step = COACH_LAYOUT_GROUPS
    parts = tuple(
        coach.render(
            **common,
            groups=groups[first : first + step],
            first_group=first,
            group_size=COACH_GROUP,
            rider_count=len(views),
            any_motor=any(v.plan.motor is not None for v in views),  # the whole sheet's riders
            together=list(job.together) if first + step >= len(groups) else [],
            rider_notes=functools.partial(rider_notes, units=units),
            climb_band=climb_band,
        )
        for first in range(0, len(groups), step)
    )
    return CardSource(parts[0], str(folder), str(folder / "coach.pdf"), parts=parts if len(parts) > 1 else ())


#: At most this many items in a card's "Watch for" box; the rest are in the tables.
WATCH_MAX = 5


#: Walking stretches named in the "Watch for" box: the longest, the rest counted.
WALK_PLACES = 3


def watch_list(plan: Plan, units: str) -> list[dict]:
    """The card's "Watch for" box: each kind of hazard once, most severe first, at most
    :data:`WATCH_MAX` items (everything is also in the tables): where the speed falls
    to nothing, where the battery reaches its reserve, walking stretches, where W′ runs
    out, the slowest curve or turn, descents where coasting would pass the vehicle's
    limit, long crawls."""
    items = []
    for code in ("stall", "battery"):
        for w in plan.warnings:
            if w.code == code:
                text = (
                    f"the speed falls to zero near {fmt.distance(w.at, units)}: walk or plan more help"
                    if code == "stall"
                    else f"battery reaches its reserve near {fmt.distance(w.at, units)}"
                )
                items.append({"code": code, "symbol": symbol_of(code), "text": text})
                break
    walks = [w for w in _all_warnings(plan) if w.code == "walk"]
    if walks:
        # the longest few, in route order; a weak rider on a hilly route may have hundreds
        shown = sorted(
            sorted(walks, key=lambda w: -w.value("length"))[:WALK_PLACES], key=lambda w: w.at or 0.0
        )
        where = ", ".join(
            f"{fmt.length(w.value('length'), units)} from {fmt.distance(w.at, units)}" for w in shown
        )
        if len(walks) > len(shown):
            total = sum(w.value("length") for w in walks)
            where = f"{where} ({len(walks)} stretches, {fmt.distance(total, units)} in all, in the tables)"
        items.append({"code": "walk", "symbol": symbol_of("walk"), "text": f"walking may be needed: {where}"})
    said = {"w-prime": "W′ runs out at the planned effort"}
    for code, words in said.items():
        rows = [row for row in plan.climbs if code in {w.code for w in row.warnings}]
        if rows:
            where = ", ".join(f"{r.number} ({fmt.distance(r.climb.start_distance, units)})" for r in rows)
            name = "climb" if len(rows) == 1 else "climbs"
            items.append({"code": code, "symbol": symbol_of(code), "text": f"{name} {where}: {words}"})
    curves = [w for w in _all_warnings(plan) if w.code == "curve"]
    if curves:
        tight = min(curves, key=lambda w: w.value("speed"))
        kind = "turn" if tight.value("junction") else "curve"
        more = f" ({len(curves)} in all, in the tables)" if len(curves) > 1 else ""
        items.append(
            {
                "code": "curve",
                "symbol": symbol_of("curve"),
                "text": f"slowest {kind} near {fmt.distance(tight.value('where'), units)}: "
                f"{fmt.radius(tight.value('radius'), units)} radius, slow to "
                f"{fmt.speed(tight.value('speed'), units, 'down')} or less{more}",
            }
        )
    fast = [row for row in plan.descents if any(w.code == "fast" for w in row.warnings)]
    if fast:
        numbers = ", ".join(str(row.number) for row in fast)
        cap = min(w.value("cap") for row in fast for w in row.warnings if w.code == "fast")
        items.append(
            {
                "code": "fast",
                "symbol": symbol_of("fast"),
                "text": f"descent{'s' if len(fast) > 1 else ''} {numbers}: coasting would pass "
                f"{fmt.speed(cap, units)}; brake to hold the speed",
            }
        )
    crawl = [row for row in plan.climbs if "crawl" in {w.code for w in row.warnings}]
    if crawl:
        where = ", ".join(f"{r.number} ({fmt.distance(r.climb.start_distance, units)})" for r in crawl)
        items.append(
            {
                "code": "crawl",
                "symbol": symbol_of("crawl"),
                "text": f"climb {where}: a long crawl, plan rests",
            }
        )
    return items[:WATCH_MAX]


def _all_warnings(plan: Plan):
    """Every notice of a plan: the route-wide ones, then each climb's and descent's."""
    yield from plan.warnings
    for climb in plan.climbs:
        yield from climb.warnings
    for descent in plan.descents:
        yield from descent.warnings


#: Most curves a card's condensed line lists each with its speed; more are given as
#: the range of speeds and the slowest (a list of 14 added a sheet to the tandem's card).
CURVES_LISTED = 4


def _curve_words(curves, units: str, each: bool = True) -> str:
    """What a line of curve notices says after its subject, each curve keeping its own
    speed (rounded down, toward caution): ": slow to 37.0 km/h at 11.4 km, 17.5 at
    12.1 km"; on a card with more than :data:`CURVES_LISTED` curves (``each`` false)
    " at 11.4–13.5 km: slow to 17.5–39.0 km/h, slowest at 12.1 km". A grouped line
    that gave the slowest speed for all asked 17.5 km/h of a curve the rider may take
    at 37.0 km/h, a warning riders learn to ignore."""
    said = [fmt.speed(w.value("speed"), units, "down") for w in curves]
    places = [fmt.distance(w.value("where"), units) for w in curves]
    if each or len(curves) <= CURVES_LISTED:
        rest = "".join(
            f", {speed.rsplit(' ', 1)[0]} at {place}"
            for speed, place in zip(said[1:], places[1:], strict=True)
        )
        return f": slow to {said[0]} at {places[0]}{rest}"
    tight = min(range(len(curves)), key=lambda i: curves[i].value("speed"))
    high = fmt.speed(max(w.value("speed") for w in curves), units, "down")
    span = high if said[tight] == high else f"{said[tight].rsplit(' ', 1)[0]}–{high}"
    return f" at {places[0].rsplit(' ', 1)[0]}–{places[-1]}: slow to {span}, slowest at {places[tight]}"


def descents_brief(rows, units: str, skip=frozenset(), each: bool = True) -> list[str]:
    """All descents' notes in a few lines (the second condensing step): every curve
    on them in one line (where, and the speed each asks for), and the descents where coasting
    would pass the vehicle's limit in another. Codes in ``skip`` are said elsewhere
    (the "Watch for" box: a warning is said once on a card)."""
    curves = [w for row in rows for w in row.warnings if w.code == "curve"]
    fast = [row for row in rows if any(w.code == "fast" for w in row.warnings)] if "fast" not in skip else []
    lines = []
    if curves:
        lines.append(f"Curves on the descents{_curve_words(curves, units, each)}.")
    if fast:
        cap = min(w.value("cap") for row in fast for w in row.warnings if w.code == "fast")
        numbers = ", ".join(str(row.number) for row in fast)
        word = "Descent" if len(fast) == 1 else "Descents"
        lines.append(f"{word} {numbers}: coasting would pass {fmt.speed(cap, units)}; control the speed.")
    return lines


def descent_notes(row, skip=frozenset()) -> list:
    """A descent's notices less the codes in ``skip`` (said in the "Watch for" box)."""
    return [w for w in row.warnings if w.code not in skip]


def descent_brief(row, units: str, skip=frozenset(), each: bool = True) -> str:
    """A descent's notes in one line (the first condensing step): its curves, where
    they are and the speed each asks for, and the speed limit where coasting would pass it
    (unless ``skip`` holds its code: said in the "Watch for" box)."""
    curves = [w for w in row.warnings if w.code == "curve"]
    parts = []
    if curves:
        word = "curve" if len(curves) == 1 else f"{len(curves)} curves"
        parts.append(f"{word}{_curve_words(curves, units, each)}")
    for w in descent_notes(row, skip):
        if w.code == "fast":
            parts.append(f"hold under {fmt.speed(w.value('cap'), units)}")
        elif w.code != "curve":
            parts.append(notice_text(w, units))
    return "; ".join(parts)


_NUMBERED = re.compile(r"^\s*checkpoint\s*\d+\s*[:.\-–]\s*", re.IGNORECASE)


def short_name(name: str) -> str:
    """A checkpoint's name without a leading "Checkpoint 3:" (the card numbers them
    Chk1, Chk2, … itself: "CP" is critical power on the card); the name as it is when nothing would be left."""
    return _NUMBERED.sub("", name) or name


def warnings_brief(warnings, units: str, skip=frozenset(), each: bool = True) -> list[str]:
    """The route-wide notices in few lines (the first condensing step): every curve
    away from the descents in one line (where, and the speed each asks for); the others as
    they are, but walking stretches, more than one, in one line too. Codes in ``skip``
    are said elsewhere (the "Watch for" box)."""
    curves = [w for w in warnings if w.code == "curve"]
    walks = [w for w in warnings if w.code == "walk"] if "walk" not in skip else []
    grouped = {"curve", "walk"} if len(walks) > 1 else {"curve"}
    lines = [notice_text(w, units) for w in warnings if w.code not in grouped and w.code not in skip]
    if len(walks) > 1:
        longest = max(walks, key=lambda w: w.value("length"))
        lines.append(
            f"{len(walks)} stretches below {fmt.speed(longest.value('speed'), units)} away from the climbs, "
            f"{fmt.distance(sum(w.value('length') for w in walks), units)} in all, the longest "
            f"{fmt.length(longest.value('length'), units)} from {fmt.distance(longest.at, units)}: "
            "hard to balance on two wheels; walking may be needed"
        )
    if curves:
        lines.append(
            f"{len(curves)} curve{'s' if len(curves) > 1 else ''} off the descents"
            f"{_curve_words(curves, units, each)}"
        )
    return lines


def rider_notes(plan: Plan, units: str) -> list[str]:
    """A rider's notes beyond the climbs, for the coach sheet: the descents (curves
    on them, coasting past the vehicle's limit) and the route-wide notices (curves and
    turns away from the descents, walking off the climbs, battery, stalls)."""
    return [*descents_brief(plan.descents, units), *warnings_brief(plan.warnings, units)]


@dataclass(frozen=True)
class _Mark:
    """A cue sheet row of the plan's own (not the route's): the fields of a cue that a
    row reads."""

    distance: float
    kind: str
    text: str
    description: str = ""


def cue_rows(plan: Plan) -> list[dict]:
    """Each cue with the distance to the next (or the finish), the elevation there
    and the rider's time to it; where the plan has the motor switched off to keep the
    battery's reserve, a row "assist off" at that place (page 1 says the same km)."""
    terrain = plan.terrain
    cues = list(plan.cues)
    off = plan.assist_off_at
    if off is not None:
        mark = _Mark(off, "assist", f"assist off: keeps the {BATTERY_RESERVE * 100:.0f} % reserve")
        row = TimedCue(mark, plan.elapsed_at(off))  # type: ignore[arg-type]  # the fields a row reads
        cues.insert(sum(1 for c in cues if c.cue.distance <= off), row)
    rows = []
    for i, timed in enumerate(cues):
        following = cues[i + 1].cue.distance if i + 1 < len(cues) else terrain.length
        rows.append(
            {
                "cue": timed.cue,
                "text": timed.cue.text,
                "next": max(following - timed.cue.distance, 0.0),
                "elevation": float(np.interp(timed.cue.distance, terrain.distance, terrain.elevation)),
                "elapsed": timed.elapsed,
            }
        )
    return rows


#: Fewest riders for which a median says more than the fastest and slowest do: with
#: two, the median is one of them (or their mean), which readers took for a third rider.
MEDIAN_FROM = 3


def median_of(values: list[float]) -> float | None:
    """The median of sorted ``values`` (the mean of the middle two for an even count),
    or None below :data:`MEDIAN_FROM` values."""
    return statistics.median(values) if len(values) >= MEDIAN_FROM else None


def _spread(values: list[float]) -> tuple:
    """(fastest, median, slowest) of finite values, or Nones (the median also below
    :data:`MEDIAN_FROM` values)."""
    finite = sorted(v for v in values if v == v and v != float("inf"))
    if not finite:
        return None, None, None
    return finite[0], median_of(finite), finite[-1]


def _when(start: datetime | None, seconds: float):
    """A moment (start + seconds), or the seconds themselves without a start."""
    if seconds != seconds or seconds == float("inf"):
        return None
    return seconds if start is None else fmt.moment(start, seconds)


def _clock_text(moment) -> str:
    if moment is None:
        return "–"
    if isinstance(moment, datetime):
        return fmt.clock(moment, 0.0)
    return fmt.clock(None, moment)


def climb_band(index: int, views) -> str:
    """Climb ``index``'s band for a coach sheet's group of riders (views), with the
    riders for whom it understates their plans."""
    rows = [(v.name, v.plan.climbs[index].rider_difficulty) for v in views]
    return difficulty.named(views[0].plan.climbs[index].climb.band, rows) if views else ""


def route_overview(job: RouteJob, views, to_second: bool = False) -> dict:
    """The route page's tables for any number of riders: per climb, descent, cue and
    checkpoint a summary over riders (fastest, median, slowest), and one row per
    rider."""
    plans = [v.plan for v in views]
    climbs = []
    for i, climb in enumerate(job.analysis.climbs):
        rows = [p.climbs[i] for p in plans]
        watts = sorted(r.power_for_target for r in rows)
        climbs.append(
            {
                "climb": climb,
                "times": _spread([r.time for r in rows]),
                "watts": (watts[0], watts[-1]) if watts else (None, None),
                "warned": sum(1 for r in rows if r.warnings),
                "band": difficulty.counted(climb.band, [r.rider_difficulty for r in rows]),
            }
        )
    descents = []
    for i, descent in enumerate(job.analysis.descents):
        rows = [p.descents[i] for p in plans]
        descents.append(
            {
                "descent": descent,
                "fastest": max((r.max_speed for r in rows), default=None),
                "coast": max((r.coast_speed for r in rows), default=None),
                "warned": sum(1 for r in rows if r.warnings),
            }
        )

    def arrivals(distance_of) -> list:
        return [_when(v.start, distance_of(v.plan)) for v in views]

    def first_last(moments: list) -> tuple[str, str]:
        known = sorted(m for m in moments if m is not None)
        return (_clock_text(known[0]), _clock_text(known[-1])) if known else ("–", "–")

    cues = [
        {"cue": cue, "span": first_last(arrivals(lambda p, i=i: p.cues[i].elapsed))}
        for i, cue in enumerate(job.analysis.cues)
    ]
    finish = first_last(arrivals(lambda p: p.finish_elapsed))
    riders = [
        {
            "name": v.name,
            "bib": e.bib,
            "vehicle": v.plan.rider.vehicle.label,
            "start": fmt.start_clock(e.start, to_second),
            "wave": e.wave,
            "finish": _clock_text(_when(e.start, v.plan.finish_elapsed)),
            "moving": v.plan.totals.time,
            # the items of the card's "Watch for" box: one count on the page and the card
            "watch_for": len(watch_list(v.plan, "metric")),
            "card": v.card,
        }
        for e, v in zip(job.riders, views, strict=True)
    ]
    return {"climbs": climbs, "descents": descents, "cues": cues, "finish": finish, "riders": riders}


def _pack_order(job: RouteJob, views, to_second: bool = False) -> list[dict]:
    """The route's cards in start order (then bib, then name): who, bib, start, file."""
    rows = [
        {
            "name": v.name,
            "bib": e.bib,
            "start": fmt.start_clock(e.start, to_second) if e.start else "",
            "sort": e.start.isoformat() if e.start else "~",
            "card": v.card,
        }
        for e, v in zip(job.riders, views, strict=True)
    ]
    rows.sort(key=lambda r: (r["sort"], r["bib"] if r["bib"] is not None else 10**9, r["name"]))
    return rows


@dataclass(frozen=True)
class PackGroup:
    """The cards of one print pack (a route's, or the event's): its folder, the
    cover's subtitle, whether the cover names each card's route, and the cards in
    print order (:class:`~cardgen.render.packs.PackEntry`). Plain data, so that a
    build can hand each pack to a process of its own."""

    where: Path
    subtitle: str
    show_route: bool
    entries: tuple
    cover_pages: int = 2  # the cover's length, as a first guess (the last build's)


def pack_groups(
    config, routes: list[tuple[str, dict]], folder: Path, fresh: set[str], covers: dict | None = None
) -> list[PackGroup]:
    """The print packs to make (docs/contracts.md): one in each route folder that was
    rendered now (``fresh`` slugs; a reused route keeps its pack) and one at the root
    for the whole event, from the cards in ``folder``. ``routes`` are (slug, summary)
    in site order; ``covers`` the length of each pack's cover in the last build (by
    the pack's folder relative to ``folder``, "." for the event's), a first guess for
    its layout. A pack without cards is left out."""
    from cardgen.render.packs import PackEntry

    groups, everyone = [], []
    covers = covers or {}
    for slug, summary in routes:
        entries = [
            PackEntry(
                r["name"], r["bib"], r["start"], summary["name"], folder / slug / r["card"], r.get("pages")
            )
            for r in summary.get("pack", [])
            if (folder / slug / r["card"]).is_file()
        ]
        if slug in fresh and entries:
            groups.append(
                PackGroup(folder / slug, summary["name"], False, tuple(entries), covers.get(slug, 2))
            )
        everyone.extend(entries)
    if everyone:
        groups.append(PackGroup(folder, "every route", True, tuple(everyone), covers.get(".", 2)))
    return groups


def render_pack_group(config, group: PackGroup, per_page: tuple[int, int] | None = None):
    """The cover's length, the packs of ``group`` to write
    (:class:`~cardgen.render.packs.PackFiles`, without their files), their files
    (``all-cards.pdf``, and ``all-cards-2up.pdf`` beside it for A5 cards, else None)
    and the cover's rows per page (``per_page``: another cover's, for a first guess
    of this one's length: :func:`~cardgen.render.packs.pack_cover`). Both files share
    one cover; :func:`~cardgen.render.packs.write_packs` streams them card by card,
    never whole (the event's pack at 3,000 riders is some 400 MB of PDF)."""
    from cardgen.render.packs import PackFiles, pack_cover

    env = _environment(config.templates, config.units)
    page = page_geometry(config.card_size, config.large_print)
    size = {"A5": (419.53, 595.28), "A4": (595.28, 841.89), "pocket": (280.63, 595.28)}[config.card_size]
    template = env.get_template("cover.html")
    entries = tuple(group.entries)
    cover, firsts, rows = pack_cover(
        entries,
        lambda rows: template.render(
            title=config.title,
            subtitle=group.subtitle,
            rows=rows,
            page=page,
            show_route=group.show_route,
            two_up=config.card_size == "A5",
        ),
        group.where,
        size,
        group.cover_pages,
        per_page,
    )
    two_up = group.where / "all-cards-2up.pdf" if config.card_size == "A5" else None
    files = (group.where / "all-cards.pdf", two_up)
    return firsts[0] - 1, PackFiles(cover, entries, size, None, None), files, rows


def route_summary(job: RouteJob, views, units: str, to_second: bool = False) -> dict:
    """One line of the index: distance, climbing, the hardest climb, riders' times."""
    terrain = job.analysis.terrain
    hardest = _hardest(job.analysis.climbs)
    return {
        "name": job.name,
        "slug": job.slug,
        "distance": terrain.length,
        "gain": terrain.gain,
        "hardest": (
            f"{fmt.length(hardest.length, units)} at {fmt.grade(hardest.avg_grade)} ({hardest.band})"
            if hardest
            else "none"
        ),
        "times": {v.name: v.plan.totals.time for v in views},
        "pack": _pack_order(job, views, to_second),
        "cards": [v.card for v in views] + (["coach.pdf"] if views else []),
    }


def render_index(config, site: dict, summaries: list[dict], packs: bool) -> dict[str, str | Path]:
    """The site's index page (``packs``: the event's print pack is there to link), and
    the theme's files it needs, by name: text, or the theme file to copy."""
    with theme_errors(config.templates):
        return _render_index(config, site, summaries, packs)


def _render_index(config, site: dict, summaries: list[dict], packs: bool) -> dict[str, str | Path]:
    env = _environment(config.templates, config.units)
    rows = []
    for summary in summaries:  # one row per route, whatever the number of riders
        times = sorted(t for t in summary["times"].values() if t == t and t != float("inf"))
        rows.append(
            {
                **summary,
                "riders": len(summary["times"]),
                "fastest": times[0] if times else None,
                "median": median_of(times),
                "slowest": times[-1] if times else None,
            }
        )
    rides = sum(row["riders"] for row in rows)
    page = env.get_template("index.html").render(
        site=site,
        routes=rows,
        packs=packs,
        root="",
        version=__version__,
        entrants=len(config.riders),
        rides=rides,
    )
    return {
        "index.html": page,
        **{name: theme_file(config.templates, name) for name in ("style.css", "find.js")},
    }


def render_day_sheet(config, summaries: list[dict], folder: Path, pdf: bool) -> dict[str, str | bytes]:
    """The organiser's day sheet of the whole event (:mod:`cardgen.render.day`), by
    file name, for ``folder``."""
    with theme_errors(config.templates):
        env = _environment(config.templates, config.units)
        rows = [row for summary in summaries for row in summary.get("day", [])]
        return day_sheet_files(env, config, rows, folder, pdf)
