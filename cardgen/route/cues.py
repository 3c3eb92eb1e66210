"""Cues: turns found in the geometry, and named waypoints and route points."""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.errors import ConfigError
from cardgen.route.geodesy import course, local_plane
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain

#: Heading change [deg] over :data:`TURN_WINDOW` that makes a turn …
TURN_THRESHOLD = 45.0
#: … a sharp turn …
SHARP_THRESHOLD = 120.0
#: … and a U-turn (a hairpin, or turning back on an out-and-back route).
U_TURN = 150.0
#: Path length [m] on each side of a node over which headings are averaged.
TURN_WINDOW = 30.0
#: Waypoints farther than this [m] from the route are left off the cue sheet.
WAYPOINT_REACH = 100.0
#: A further pass of a point counts when it comes within this [m] (or twice the
#: nearest pass's distance).
PASS_REACH = 25.0


@dataclass(frozen=True)
class Cue:
    """One line of a cue sheet.

    ``distance`` [m] from the start; ``kind`` is "turn", "waypoint" or "route point";
    ``text`` the instruction ("turn right", "sharp left", or the point's name);
    ``turn`` [deg] signed heading change (right positive), 0 for points;
    ``description``/``link``/``point_type`` come from the GPX file (untrusted text).
    """

    distance: float
    kind: str
    text: str
    turn: float = 0.0
    description: str = ""
    link: str = ""
    point_type: str = ""
    offset: float = 0.0


def _turn_angles(terrain: Terrain, window: float) -> np.ndarray:
    """Signed turn [deg] across the corner at each node: the course ``window`` metres
    after the node minus the course ``window`` metres before it (the unwrapped course
    of :func:`~cardgen.route.geodesy.course`), so a corner's whole angle is measured,
    a hairpin's 180° included."""
    heading = np.degrees(course(terrain.lat, terrain.lon))
    k = max(1, int(round(window / terrain.step)))
    n = terrain.distance.size
    angles = np.zeros(n)
    if heading.size < 2 * k:
        return angles
    # node i sits between segments i − 1 and i: compare segment i + k − 1 with i − k
    angles[k : n - k] = heading[2 * k - 1 :] - heading[: n - 2 * k]
    return angles


def find_turns(
    terrain: Terrain,
    *,
    threshold: float = TURN_THRESHOLD,
    sharp: float = SHARP_THRESHOLD,
    window: float = TURN_WINDOW,
) -> list[Cue]:
    """Turns where the heading changes by ``threshold`` degrees or more within
    ``window`` metres either side; one cue per turn, at its sharpest node."""
    angles = _turn_angles(terrain, window)
    for where in terrain.gaps:  # a joined gap between track segments is no turn
        angles[np.abs(terrain.distance - where) <= 2 * window] = 0.0
    over = np.abs(angles) >= threshold
    cues: list[Cue] = []
    if not over.any():
        return cues
    edges = np.diff(np.concatenate(([0], over.astype(np.int8), [0])))
    for a, b in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True):
        run = np.abs(angles[a:b])
        top = np.flatnonzero(run >= run.max() - 0.5)  # the corner's whole angle holds over a stretch:
        i = a + int(top[len(top) // 2])  # the cue goes to its middle
        angle = float(angles[i])
        side = "right" if angle > 0 else "left"
        if abs(angle) >= U_TURN:
            text = f"U-turn {side}"
        else:
            text = f"sharp {side}" if abs(angle) >= sharp else f"turn {side}"
        cues.append(Cue(float(terrain.distance[i]), "turn", text, angle))
    return cues


def place_points(
    terrain: Terrain, points: Sequence[Any], kind: str, reach: float = WAYPOINT_REACH
) -> tuple[list[Cue], list[str]]:
    """Cues for named points (waypoints or route points) within ``reach`` of the route.

    A point gets one cue for each pass of the route within ``reach`` of it (an
    out-and-back passes a feed twice), each at the pass's nearest grid node. Returns
    (cues sorted by distance, names of the points left off).
    """
    if not points:
        return [], []
    lat0 = float(np.radians(np.mean(terrain.lat)))
    nodes_xy = local_plane(terrain.lat, terrain.lon, lat0)
    points_xy = local_plane([p.lat for p in points], [p.lon for p in points], lat0)
    chunk = max(1, 4_000_000 // nodes_xy.shape[0])  # bounds the distance matrix to ~32 MB
    cues, off = [], []
    for a in range(0, len(points), chunk):
        d2 = ((points_xy[a : a + chunk, None, :] - nodes_xy[None, :, :]) ** 2).sum(axis=2)
        for p, row in zip(points[a : a + chunk], d2, strict=True):
            near = np.flatnonzero(row <= reach * reach)
            if near.size == 0:
                off.append(p.name or "(unnamed)")
                continue
            # a pass is a run of nodes within reach; a new pass after a break. Passes
            # other than the nearest count only when about as near (PASS_REACH), not a
            # road that merely runs within reach
            best = float(row[near].min())
            again = max(PASS_REACH**2, 4.0 * best)
            for run in np.split(near, np.flatnonzero(np.diff(near) > 1) + 1):
                i = int(run[np.argmin(row[run])])
                if row[i] > again:
                    continue
                cues.append(
                    Cue(
                        float(terrain.distance[i]),
                        kind,
                        p.name,
                        0.0,
                        p.description,
                        p.link,
                        p.kind,
                        float(np.sqrt(row[i])),
                    )
                )
    return sorted(cues, key=lambda c: c.distance), off


def cue_sheet(terrain: Terrain, track: Track) -> tuple[list[Cue], list[str]]:
    """Every cue of a route, in order of distance, and warnings about points left off."""
    turns = find_turns(terrain)
    wpts, off_w = place_points(terrain, [w for w in track.waypoints if w.name], "waypoint")
    rpts, off_r = place_points(terrain, list(track.route_points), "route point")
    warnings = [
        f"{len(off)} named points are more than {WAYPOINT_REACH:.0f} m from the route and were "
        f"left off the cue sheet: {', '.join(off[:5])}"
        for off in (off_w + off_r,)
        if off
    ]
    cues = sorted(
        turns + _without_loop_ends(wpts, terrain) + _without_loop_ends(rpts, terrain),
        key=lambda c: c.distance,
    )
    return cues, warnings


def _without_loop_ends(cues: list[Cue], terrain: Terrain, reach: float = WAYPOINT_REACH) -> list[Cue]:
    """Point cues without the pass at the finish of a point also passed at the start:
    on a loop, the start place comes round again at the finish, where the cue sheet's
    own "Finish" line stands (the sheet printed both at the same distance). A point
    passed only at the finish keeps its cue."""
    at_start = {(c.text, c.description) for c in cues if c.distance <= reach}
    return [
        c
        for c in cues
        if not (
            c.distance >= terrain.length - reach
            and (c.text, c.description) in at_start
            and c.distance > reach
        )
    ]


#: An organiser's cue text applies to the cue within this distance [m] of where it
#: says.
CUE_TEXT_REACH = 150.0


def apply_cue_texts(cues: Sequence[Cue], texts: Sequence[tuple[float, str]], where: str) -> tuple[Cue, ...]:
    """The cues with the organiser's words in place of the GPX's for each (distance
    [m], text) given: the nearest cue within :data:`CUE_TEXT_REACH`.

    Raises ConfigError naming ``where`` (the GPX file) for a distance with no cue near.
    """
    out = list(cues)
    problems = []
    for distance, text in texts:
        near = [i for i, c in enumerate(out) if abs(c.distance - distance) <= CUE_TEXT_REACH]
        if not near:
            around = sorted(out, key=lambda c: abs(c.distance - distance))[:3]
            problems.append(
                f"cue_texts: no cue within {CUE_TEXT_REACH:.0f} m of {distance / 1000:g} km; the nearest are at "
                + ", ".join(f"{c.distance / 1000:.1f} km ({c.text})" for c in around)
            )
            continue
        i = min(near, key=lambda j: abs(out[j].distance - distance))
        out[i] = dataclasses.replace(out[i], text=text)
    if problems:
        raise ConfigError(f"{where}: " + "; ".join(problems))
    return tuple(out)
