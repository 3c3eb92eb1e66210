"""``cardgen check``: everything a build can find without rendering; writes nothing."""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

from cardgen.cli.build import _say_config, _site_config, output_folder
from cardgen.cli.common import _print
from cardgen.errors import CardgenError

if TYPE_CHECKING:
    from cardgen.settings import SiteConfig

#: Riders named by ``check`` (a field of thousands is counted, not listed).
CHECK_NAMES = 12


def _print_waves(config: SiteConfig) -> None:
    """Each start wave's riders and first and last start (one start line per wave,
    whatever the routes its riders ride)."""
    from cardgen.config import plural
    from cardgen.plan.starts import event_starts
    from cardgen.render.format import spacing

    starts = event_starts(config)
    shown = "%H:%M:%S" if starts.to_second else "%H:%M"
    for wave in starts.waves:
        if wave.riders and wave.first and wave.last:
            _print(
                f"wave {wave.name}: {plural(wave.riders, 'start')}, first {wave.first:{shown}}, "
                f"last {wave.last:{shown}}{spacing(wave.riders, wave.interval)}"
            )
        else:
            _print(f"wave {wave.name}: no riders start in it")


def _entrants_and_rides(config: SiteConfig) -> str:
    """ "9 entrants, 9 rides", and what makes them differ: a rider entered on several
    routes (or on none named: every route) has a card, a start and a place in the
    checkpoint, feed and sweep counts on each route, as a ride of its own."""
    from cardgen.config import plural

    rides = [sum(1 for rc in config.routes if r.rides(rc, rc.name or rc.gpx.stem)) for r in config.riders]
    said = f"{plural(len(config.riders), 'entrant')}, {plural(sum(rides), 'ride')}"
    several = sum(1 for n in rides if n > 1)
    if several:
        said += (
            f" ({plural(several, 'entrant')} on more than one route: each route counts them "
            "as a ride of its own, with its own card, start and feed stock)"
        )
    return said


def cmd_check(args: argparse.Namespace) -> int:
    """Everything a build can find without rendering, all at once."""
    from cardgen.config import one_or_listed, plural
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import plan_route

    config, demo = _site_config(args.site)
    _say_config(config)
    problems = []
    for route in config.routes:
        try:
            surveyed = plan_route(  # the route as a build reads it, without riders
                read_gpx(route.gpx),
                [],
                cue_texts=route.cue_texts,
                checkpoints=route.checkpoints,
                stops=route.stops,
                stop=route.stop,
                feeds=route.feeds,
                marshals=route.marshals,
                where=str(route.gpx),
            )
            analysis, checkpoints, points = surveyed.analysis, surveyed.checkpoints, surveyed.points
        except CardgenError as exc:
            problems.append(str(exc))
            continue
        _print(
            f"ok  {route.gpx.name}: {analysis.terrain.length / 1000:.1f} km, "
            f"{plural(analysis.track.points, 'point')}, "
            f"{plural(len(analysis.climbs), 'climb')}, {plural(len(checkpoints), 'checkpoint')}"
            + "".join(
                f", {plural(n, word)}"
                for word, n in (
                    ("feed point", sum(p.kind == "feed" for p in points)),
                    ("marshal point", sum(p.kind == "marshal" for p in points)),
                )
                if n
            )
        )
        for warning in analysis.warnings:
            _print(f"cardgen: warning: {route.gpx.name}: {warning}", file=sys.stderr)
    names = [r.rider.name for r in config.riders[:CHECK_NAMES]]
    more = len(config.riders) - len(names)
    _print(
        f"{_entrants_and_rides(config)}: " + "; ".join(names) + (f"; and {more:,} more" if more > 0 else "")
    )
    _print_waves(config)
    if problems:
        raise CardgenError(one_or_listed(problems, "in the routes"))
    _print(
        f"configuration and routes are fine; nothing was written (a build writes to {output_folder(config, demo)})"
    )
    return 0


def add_parser(sub: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    """The ``check`` command's options."""
    check = sub.add_parser(
        "check",
        help="check a site's configuration and routes; writes nothing (no argument: the demo event)",
        description="Check a site's configuration and routes; writes nothing. No argument: the bundled "
        "demo event, as build takes it.",
    )
    check.add_argument("site", nargs="?", metavar="SITE.toml|FOLDER")
    check.set_defaults(run=cmd_check)
