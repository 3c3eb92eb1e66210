"""Checkpoints on a route: by waypoint name, by distance, or the waypoints typed
"checkpoint"; feed and marshal points by waypoint name or distance."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from cardgen.errors import ConfigError, close_matches
from cardgen.route.cues import place_points
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain


@dataclass(frozen=True)
class Checkpoint:
    name: str
    distance: float  # [m] from the start
    stop: float = 0.0  # [s] planned stop there
    kind: str = "checkpoint"  # or "feed", "marshal" (points of the day sheet only)


#: The kinds of point a route declares: the word for it in messages, and the name of
#: one given as a distance ("Feed at 42 km").
KINDS = {
    "checkpoint": ("checkpoint", "Checkpoint"),
    "feed": ("feed point", "Feed"),
    "marshal": ("marshal point", "Marshal point"),
}


def checkpoints_from_waypoints(track: Track, terrain: Terrain) -> list[Checkpoint]:
    """Waypoints of type "checkpoint" (or named "Checkpoint …") on the route."""
    chosen = [
        w
        for w in track.waypoints
        if w.kind.strip().lower() == "checkpoint" or w.name.strip().lower().startswith("checkpoint")
    ]
    cues, _ = place_points(terrain, chosen, "waypoint")
    return [Checkpoint(c.text, c.distance) for c in cues]


def resolve_checkpoints(
    items: Sequence[str | float],
    track: Track,
    terrain: Terrain,
    where: str,
    stops: Sequence[float] = (),
    stop: float = 0.0,
) -> list[Checkpoint]:
    """The checkpoints a configuration names: waypoint names (str) or distances [m];
    none given: the waypoints typed "checkpoint". Sorted by distance. Each gets its
    planned stop [s]: ``stops`` one per item (a waypoint passed twice stops at each
    pass; with no items, one per GPX checkpoint in route order), else ``stop``.

    Raises ConfigError naming ``where`` (the GPX file) for a name that is not a
    waypoint or a distance off the route.
    """
    if not items:
        found = checkpoints_from_waypoints(track, terrain)
        if stops and len(stops) != len(found):
            raise ConfigError(
                f"{where}: stops_min has {len(stops)} entries but the GPX file marks {len(found)} "
                f"checkpoint{'' if len(found) == 1 else 's'} (waypoints of type \"checkpoint\"); give one stop "
                "for each, in route order, or list the checkpoints"
            )
        pauses = list(stops) if stops else [stop] * len(found)
        return [Checkpoint(c.name, c.distance, float(p)) for c, p in zip(found, pauses, strict=True)]
    pauses = [float(stops[i]) if i < len(stops) else stop for i in range(len(items))]
    return _place(items, pauses, track, terrain, where, "checkpoint")


def resolve_points(
    items: Sequence[str | float], track: Track, terrain: Terrain, where: str, kind: str
) -> list[Checkpoint]:
    """Feed or marshal points (``kind``: "feed", "marshal") a configuration names:
    waypoint names (every pass of one) or distances [m]; no planned stop. Sorted by
    distance. Raises ConfigError like :func:`resolve_checkpoints`."""
    return _place(items, [0.0] * len(items), track, terrain, where, kind)


def _place(
    items: Sequence[str | float],
    pauses: Sequence[float],
    track: Track,
    terrain: Terrain,
    where: str,
    kind: str,
) -> list[Checkpoint]:
    """Points of ``kind`` by waypoint name or distance [m], each with its pause [s]."""
    word, title = KINDS[kind]
    names = {w.name for w in track.waypoints}
    out: list[Checkpoint] = []
    problems: list[str] = []
    for item, pause in zip(items, pauses, strict=True):
        if isinstance(item, str):
            if item in names:  # every pass of it (out and back)
                cues, _ = place_points(terrain, [w for w in track.waypoints if w.name == item], "waypoint")
                out.extend(Checkpoint(c.text, c.distance, pause, kind) for c in cues)
            else:
                problems.append(
                    f"{word} {item!r} is not a waypoint of the route{close_matches(item, names)}; "
                    "use a waypoint name or a distance in km"
                )
        elif item < 0:
            problems.append(f"{word} at {item / 1000:g} km is before the start; distances count from 0 km")
        elif item > terrain.length:
            problems.append(
                f"{word} at {item / 1000:g} km is beyond the route's {terrain.length / 1000:.1f} km"
            )
        else:
            out.append(Checkpoint(f"{title} at {item / 1000:g} km", float(item), pause, kind))
    if problems:
        raise ConfigError(f"{where}: " + "; ".join(problems))
    return sorted(out, key=lambda c: c.distance)
