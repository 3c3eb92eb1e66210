"""One route → its plans: the one path from a read track to every rider's plan, used
by the build and by the ``route`` command alike."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass

from cardgen.plan.model import Analysis, Plan
from cardgen.plan.rider import analyse, make_plan
from cardgen.profiles.riders import Rider
from cardgen.route.checkpoints import Checkpoint, resolve_checkpoints, resolve_points
from cardgen.route.cues import apply_cue_texts
from cardgen.route.gpx import Track
from cardgen.route.terrain import build_terrain
from cardgen.settings import Conditions


@dataclass(frozen=True)
class RoutePlans:
    """A route's analysis (with the organiser's cue texts), its checkpoints (with
    their planned stops), one plan per rider, in the riders' order, and its feed and
    marshal points (kinds "feed", "marshal"; by distance; no planned stop)."""

    analysis: Analysis
    checkpoints: tuple[Checkpoint, ...]
    plans: tuple[Plan, ...]
    points: tuple[Checkpoint, ...] = ()


def plan_route(
    track: Track,
    riders: Sequence[Rider],
    conditions: Conditions | None = None,
    *,
    cue_texts: Sequence[tuple[float, str]] = (),
    checkpoints: Sequence[str | float] = (),
    stops: Sequence[float] = (),
    stop: float = 0.0,
    feeds: Sequence[str | float] = (),
    marshals: Sequence[str | float] = (),
    where: str = "",
    light: bool = False,
) -> RoutePlans:
    """Analyse ``track`` once and plan every rider on it.

    Parameters
    ----------
    track : the route as read
    riders : the riders, each on their vehicle
    conditions : wind and temperature (still air, standard atmosphere when None)
    cue_texts : (distance [m], text) pairs: the organiser's words for the nearest cue
    checkpoints : waypoint names or distances [m]; none: the GPX's checkpoint waypoints
    stops, stop : planned stop [s] at each checkpoint listed, or at every one
    feeds, marshals : feed and marshal points, waypoint names or distances [m] (the
        day sheet's; riders plan no stop there)
    where : the GPX file's name, for error messages
    light : keep only what a build's pages need of each plan (:meth:`Plan.lightened`),
        as each is made, so a large event's plans do not pile up in memory

    Raises
    ------
    ConfigError for a cue text, a checkpoint, a feed or a marshal point that is not on
    the route.
    """
    analysis = analyse(track, build_terrain(track))
    if cue_texts:  # the organiser's words in place of the GPX's
        analysis = dataclasses.replace(analysis, cues=apply_cue_texts(analysis.cues, cue_texts, where))
    found = resolve_checkpoints(checkpoints, track, analysis.terrain, where, stops=stops, stop=stop)
    points = sorted(
        resolve_points(feeds, track, analysis.terrain, where, "feed")
        + resolve_points(marshals, track, analysis.terrain, where, "marshal"),
        key=lambda c: c.distance,
    )
    pauses = tuple((c.distance, c.stop) for c in found)
    plans = []
    for rider in riders:
        plan = make_plan(analysis, rider=rider, conditions=conditions, stops=pauses)
        plans.append(plan.lightened() if light else plan)
    return RoutePlans(analysis, tuple(found), tuple(plans), tuple(points))
