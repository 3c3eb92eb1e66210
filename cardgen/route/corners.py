"""The radius of each corner, from the geometry of the whole corner.

A window of fixed length cannot see a corner shorter than itself: the turn of a
6 m corner spread over a 30 m window reads as a 13 m radius. Here a corner is a
stretch where the mean heading turns by :data:`DETECT_TURN` across
:data:`DETECT_WINDOW` and its fitted legs by :data:`CORNER_TURN`; its two legs (the straight track before and after it) are
fitted as lines, and the corner as the circle tangent to both (the simple curve of
road design: tangent length T = R·tan(Θ/2), external distance E = R·(sec(Θ/2) − 1),
for a deflection Θ). The radius comes from

- the separation of the legs on a hairpin (Θ ≥ :data:`HAIRPIN_TURN`): the two legs
  of a U-turn of radius R are 2R apart, whatever the sampling;
- otherwise from the track points between the legs: for each radius tried, the
  squared distance of the points to the path leg–arc–leg (the centre on the bisector
  of the legs at R·sec(Θ/2) from their intersection); of the radii that fit about
  equally well, the middle one. Points on the arc pin the radius;
- when no track point lies on the arc (a corner shorter than the point spacing), the
  points only bound the radius: the arc's tangent points must lie between the legs'
  last points, so every R up to R_max fits them equally well, and the middle of that
  range is about R_max / 2, on the slower side of what is possible.

A corner with no track point on its arc (every point lies on one of the two legs'
lines) turns at a single point: most often a junction, where a route planner puts
one point where two roads meet. Its radius is not in the data; such a corner is
marked ``junction`` (a cue, not a bend of the road) and, like every corner, is given
at least :data:`MIN_TURN_RADIUS`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from cardgen.route.geodesy import course, local_plane

#: Turn [deg] between the mean headings of the two halves of :data:`DETECT_WINDOW`
#: that marks a stretch to look at, and the least turn of its fitted legs that makes
#: it a corner. Curves too long for the window (R above about 40 m) are left to the
#: windowed radius of :mod:`cardgen.route.terrain`, which measures them well.
DETECT_TURN = 20.0
CORNER_TURN = 30.0
#: Window [m] over which the turn is measured to find corners.
DETECT_WINDOW = 30.0
#: Length [m] of each leg fitted as a straight line beside a corner.
LEG_LENGTH = 30.0
#: Deflection [deg] from which the corner is a hairpin and its radius is half the
#: legs' separation.
HAIRPIN_TURN = 160.0
#: No corner radius is tried below this [m]; a bicycle cannot turn tighter.
MIN_RADIUS = 1.0
#: Least effective radius [m] of a turn taken on a road: the path a rider follows
#: through a turn at an ordinary junction (kerb radii of a few metres, plus the
#: distance the rider keeps from the kerb). Common practice, no published source.
#: No corner's radius is given below it, junction or bend.
MIN_TURN_RADIUS = 5.0
#: A track point lies on a corner's arc when it is off both legs' lines by more than
#: this [m] (or twice the legs' own scatter, GPS noise, when that is larger).
ARC_OFFSET = 0.5


@dataclass(frozen=True)
class Corner:
    """A corner: where it starts and ends along the track [m], its deflection Θ
    [rad] (right positive) and its radius [m]."""

    start: float
    end: float
    turn: float
    radius: float
    junction: bool = False


def _turn_regions(
    d: np.ndarray, heading: np.ndarray, window: float, threshold: float
) -> list[tuple[float, float]]:
    """Stretches [m] where the heading changes by at least ``threshold`` [rad]
    within ``window`` [m]."""
    # the mean heading over each half of the window, from the running integral of
    # the (unwrapped) heading along the track: a noisy point moves it little
    total = np.concatenate(([0.0], np.cumsum(heading * np.diff(d))))
    half = window / 2
    probe = np.arange(d[0] + half, d[-1] - half + 1e-9, max(window / 6.0, 1.0))
    if probe.size == 0:
        return []

    def mean(a: np.ndarray, b: np.ndarray) -> np.ndarray:
        return np.asarray((np.interp(b, d, total) - np.interp(a, d, total)) / (b - a))

    turning = np.abs(mean(probe, probe + half) - mean(probe - half, probe)) >= threshold
    regions: list[tuple[float, float]] = []
    edges = np.flatnonzero(np.diff(np.concatenate(([0], turning.astype(int), [0]))))
    for a, b in zip(edges[::2], edges[1::2], strict=True):
        lo = max(d[0], probe[a] - half)
        hi = min(d[-1], probe[b - 1] + half)
        if regions and lo <= regions[-1][1]:
            regions[-1] = (regions[-1][0], hi)
        else:
            regions.append((lo, hi))
    return regions


def _leg(xy: np.ndarray, d: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray, float] | None:
    """A point on, the unit direction of, and the rms scatter [m] about the track
    between ``lo`` and ``hi`` [m] fitted as a line (principal axis, oriented along
    travel)."""
    if hi - lo < 1e-6:
        return None
    s = np.concatenate(([lo], d[(d > lo) & (d < hi)], [hi]))
    pts = np.column_stack((np.interp(s, d, xy[:, 0]), np.interp(s, d, xy[:, 1])))
    centre = pts.mean(axis=0)
    _, sv, vt = np.linalg.svd(pts - centre, full_matrices=False)
    u = vt[0]
    if np.dot(pts[-1] - pts[0], u) < 0:
        u = -u
    return centre, u, float(sv[-1] / np.sqrt(len(pts)))


def _cross(a: np.ndarray, b: np.ndarray) -> float:
    return float(a[0] * b[1] - a[1] * b[0])


def _misfit(q: np.ndarray, u1: np.ndarray, u2: np.ndarray, half: float, radii: np.ndarray) -> np.ndarray:
    """Sum over the points ``q`` (relative to the legs' intersection) of the squared
    distance [m²] to the path leg–arc–leg for each radius in ``radii``."""
    inside = (u2 - u1) / np.linalg.norm(u2 - u1)  # towards the centre, on the bisector
    r = radii[:, None]
    tangent = r * np.tan(half)
    along_in = (q @ u1)[None, :]
    along_out = (q @ u2)[None, :]
    # distance to the in-leg ray ending at its tangent point, and to the out-leg ray
    off_in = np.abs(q @ np.array([-u1[1], u1[0]]))[None, :]
    off_out = np.abs(q @ np.array([-u2[1], u2[0]]))[None, :]
    past_in = np.maximum(along_in + tangent, 0.0)
    before_out = np.maximum(tangent - along_out, 0.0)
    d_in = np.hypot(off_in, past_in)
    d_out = np.hypot(off_out, before_out)
    centre = r[..., None] * inside[None, None, :] / np.cos(half)  # (k, 1, 2)
    rel = q[None, :, :] - centre
    dist_c = np.linalg.norm(rel, axis=2)
    in_sector = (-rel @ inside) >= dist_c * np.cos(half)
    d_arc = np.where(in_sector, np.abs(dist_c - r), np.inf)
    return np.asarray(np.sum(np.minimum(np.minimum(d_in, d_out), d_arc) ** 2, axis=1))


#: Radii [m] tried for a corner.
RADII = np.geomspace(MIN_RADIUS, 400.0, 400)
#: A radius fits "about equally well" when its misfit is within this share of the
#: best, plus :data:`FIT_SLACK` [m] rms per point (or the legs' own scatter about
#: their lines, GPS noise, when that is larger).
FIT_SHARE = 0.1
FIT_SLACK = 0.03


def _fit_radius(
    pts: np.ndarray,
    p1: np.ndarray,
    u1: np.ndarray,
    p2: np.ndarray,
    u2: np.ndarray,
    turn: float,
    scatter: float,
) -> float:
    """Radius [m] of the circle tangent to both legs that the corner's points fix
    (see the module notes)."""
    if abs(turn) >= np.radians(HAIRPIN_TURN):
        # the out-leg's distance from the in-leg's line, across the direction of travel
        return max(MIN_RADIUS, abs(_cross(u1, p2 - p1)) / 2.0)
    t = _cross(p2 - p1, u2) / _cross(u1, u2)
    vertex = p1 + t * u1
    misfit = _misfit(pts - vertex, u1, u2, abs(turn) / 2.0, RADII)
    slack = max(FIT_SLACK, scatter)
    good = RADII[misfit <= misfit.min() * (1 + FIT_SHARE) + len(pts) * slack**2]
    # the middle of the radii the points allow: the best fit where the points pin it,
    # half the largest possible where no point lies on the arc
    return float(0.5 * (good.min() + good.max()))


def find_corners(lat: np.ndarray, lon: np.ndarray, d: np.ndarray) -> list[Corner]:
    """Corners of a track given by its points and their distance ``d`` [m] along it
    (strictly increasing)."""
    if d.size < 3:
        return []
    heading = course(lat, lon)
    mid_d = 0.5 * (d[:-1] + d[1:])
    lon_u = _unwrap(lon)
    corners = []
    for lo, hi in _turn_regions(d, heading, DETECT_WINDOW, np.radians(DETECT_TURN)):
        a = max(0, int(np.searchsorted(d, lo - LEG_LENGTH)) - 1)
        b = min(d.size, int(np.searchsorted(d, hi + LEG_LENGTH)) + 1)
        la, lo_, ds = lat[a:b], lon_u[a:b], d[a:b]
        c = la.size // 2
        phi0 = float(np.radians(la[c]))
        xy = local_plane(la, lo_, phi0) - local_plane(la[c : c + 1], lo_[c : c + 1], phi0)
        leg_in = _leg(xy, ds, max(d[0], lo - LEG_LENGTH), lo)
        leg_out = _leg(xy, ds, hi, min(d[-1], hi + LEG_LENGTH))
        if leg_in is None or leg_out is None:
            continue
        (p1, u1, rms1), (p2, u2, rms2) = leg_in, leg_out
        # the course's own sum keeps turns beyond 180° (a loop) whole
        whole = float(np.interp(hi, mid_d, heading) - np.interp(lo, mid_d, heading))
        between = abs(float(np.arctan2(_cross(u1, u2), float(u1 @ u2))))
        if between < np.radians(CORNER_TURN) and abs(whole) <= np.radians(200.0):
            continue  # the legs themselves barely turn: noise, or a wiggle
        junction = False
        if abs(whole) > np.radians(200.0):  # a loop: its legs say nothing of its radius
            radius = max(MIN_RADIUS, (hi - lo - DETECT_WINDOW / 2) / abs(whole))
        else:
            inner = (ds > lo) & (ds < hi)
            scatter = max(rms1, rms2)
            radius = _fit_radius(xy[inner], p1, u1, p2, u2, between, scatter)
            junction = not _on_arc(xy[inner], p1, u1, p2, u2, max(ARC_OFFSET, 2.0 * scatter))
        corners.append(
            Corner(start=lo, end=hi, turn=whole, radius=max(radius, MIN_TURN_RADIUS), junction=junction)
        )
    return corners


def _on_arc(
    pts: np.ndarray, p1: np.ndarray, u1: np.ndarray, p2: np.ndarray, u2: np.ndarray, off: float
) -> bool:
    """Whether any of ``pts`` lies off both legs' lines by more than ``off`` [m]: a
    point of the corner's arc, not of its legs."""
    if pts.size == 0:
        return False
    d1 = np.abs((pts - p1) @ np.array([-u1[1], u1[0]]))
    d2 = np.abs((pts - p2) @ np.array([-u2[1], u2[0]]))
    return bool(np.any((d1 > off) & (d2 > off)))


def _unwrap(lon: np.ndarray) -> np.ndarray:
    return np.asarray(np.degrees(np.unwrap(np.radians(lon))))
