"""One route of a site, read and analysed once for all its riders."""

from __future__ import annotations

import dataclasses

from cardgen.io.gpx import read_gpx
from cardgen.plan.model import Analysis
from cardgen.plan.rider import analyse
from cardgen.route.checkpoints import Checkpoint, resolve_checkpoints
from cardgen.route.cues import apply_cue_texts
from cardgen.route.terrain import build_terrain
from cardgen.settings import RouteConfig


def survey_route(route: RouteConfig) -> tuple[Analysis, tuple[Checkpoint, ...]]:
    """The route's analysis (climbs, descents, cues with the organiser's words in place
    of the GPX's) and its checkpoints with their planned stops.

    Raises
    ------
    CardgenError
        For an unreadable GPX file, an unknown checkpoint or a cue text off the route.
    """
    track = read_gpx(route.gpx)
    analysis = analyse(track, build_terrain(track))
    if route.cue_texts:
        analysis = dataclasses.replace(
            analysis, cues=apply_cue_texts(analysis.cues, route.cue_texts, str(route.gpx))
        )
    checkpoints = resolve_checkpoints(
        route.checkpoints, track, analysis.terrain, str(route.gpx), stops=route.stops, stop=route.stop
    )
    return analysis, tuple(checkpoints)
