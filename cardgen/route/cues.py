"""Cues: turns found in the geometry, and named waypoints and route points."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.route.geodesy import course, local_plane
from cardgen.route.gpx import Track
from cardgen.route.terrain import Terrain

#: Heading change [deg] over :data:`TURN_WINDOW` that makes a turn …
TURN_THRESHOLD = 45.0
#: … and a sharp turn.
SHARP_THRESHOLD = 120.0
#: Path length [m] on each side of a node over which headings are averaged.
TURN_WINDOW = 30.0
#: Waypoints farther than this [m] from the route are left off the cue sheet.
WAYPOINT_REACH = 100.0


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
    """Signed heading change [deg] at each node: mean heading over ``window`` after
    the node minus the mean over ``window`` before it (the unwrapped course of
    :func:`~cardgen.route.geodesy.course`)."""
    heading = np.degrees(course(terrain.lat, terrain.lon))
    k = max(1, int(round(window / terrain.step)))
    n = terrain.distance.size
    angles = np.zeros(n)
    if heading.size < 2 * k:
        return angles
    c = np.concatenate(([0.0], np.cumsum(heading)))
    mean_before = (c[k:-k] - c[: -2 * k]) / k  # segments i-k … i-1, node i = k … n-1-k
    mean_after = (c[2 * k :] - c[k:-k]) / k  # segments i … i+k-1
    angles[k : n - k] = mean_after - mean_before
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
        i = a + int(np.argmax(np.abs(angles[a:b])))
        angle = float(angles[i])
        side = "right" if angle > 0 else "left"
        text = f"sharp {side}" if abs(angle) >= sharp else f"turn {side}"
        cues.append(Cue(float(terrain.distance[i]), "turn", text, angle))
    return cues


def place_points(terrain: Terrain, points: Sequence[Any], kind: str, reach: float = WAYPOINT_REACH) -> Any:
    """Cues for named points (waypoints or route points) within ``reach`` of the route.

    Each point goes to the nearest grid node (on a loop that passes a point twice,
    the nearer pass). Returns (cues, names of the points left off).
    """
    if not points:
        return [], []
    lat0 = float(np.radians(np.mean(terrain.lat)))
    nodes_xy = local_plane(terrain.lat, terrain.lon, lat0)
    points_xy = local_plane([p.lat for p in points], [p.lon for p in points], lat0)
    gaps = np.empty(len(points))
    nodes = np.empty(len(points), dtype=int)
    chunk = max(1, 4_000_000 // nodes_xy.shape[0])  # bounds the distance matrix to ~32 MB
    for a in range(0, len(points), chunk):
        d2 = ((points_xy[a : a + chunk, None, :] - nodes_xy[None, :, :]) ** 2).sum(axis=2)
        nodes[a : a + chunk] = np.argmin(d2, axis=1)
        gaps[a : a + chunk] = np.sqrt(d2[np.arange(d2.shape[0]), nodes[a : a + chunk]])
    cues, off = [], []
    for p, gap, i in zip(points, gaps, nodes, strict=True):
        if gap > reach:
            off.append(p.name or "(unnamed)")
            continue
        cues.append(
            Cue(float(terrain.distance[i]), kind, p.name, 0.0, p.description, p.link, p.kind, float(gap))
        )
    return cues, off


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
    cues = sorted(turns + wpts + rpts, key=lambda c: c.distance)
    return cues, warnings
