"""Terrain along a route: distance, a uniform grid, smoothed elevation, grade,
heading and curve radius.

References
----------
Tukey, J. W. (1977). *Exploratory Data Analysis*. Addison-Wesley (running medians).
Pearson, R. K. (2002). Outliers in process modeling and identification. *IEEE
Transactions on Control Systems Technology* 10(1):55–63. doi:10.1109/87.974338 (the
Hampel identifier).
The smoothing's own: see :mod:`cardgen.route.profile_fit`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view

from cardgen.errors import GpxError
from cardgen.route.corners import MIN_TURN_RADIUS, find_corners
from cardgen.route.geodesy import bearing, course, cumulative_distance, local_plane
from cardgen.route.gpx import Track
from cardgen.route.profile_fit import (
    NOISE_FLOOR,
    RoughProfile,
    fit_profile,
    grid_noise,
    point_noise,
)
from cardgen.units import Floats

#: Default grid step [m].
GRID_STEP = 10.0
#: Running-median width [points] that removes single- and double-point spikes.
SPIKE_POINTS = 5
#: A value this many robust spreads from its running median is a spike (Pearson
#: 2002 uses 3).
SPIKE_SCALES = 3.0
#: Deadband for total gain and loss [m]: a rise or fall counts once it is this far
#: from the last turning point. Common practice is 1–3 m on barometric data (no
#: published source); GPS elevations need more: good receivers stay within 5 m
#: vertically 95 % of the time (GPS SPS Performance Standard, 2008).
GAIN_DEADBAND = 5.0
#: Window [m] over which heading change gives the curve radius.
CURVE_WINDOW = 30.0
#: Longest route cardgen plans [m]: 10,000 km, longer than any ridden single-stage
#: event (the longest, across a continent, are under 5,000 km; from memory). Every
#: array of the plan has one value per grid node, so this bounds the work a GPX file
#: can ask for: at 10 m, 1,000,000 nodes, about 0.6 GB and a few seconds for
#: `cardgen route` (measured on a synthetic 10,000 km route).
MAX_ROUTE_LENGTH = 10_000_000.0
#: Most grid segments of one route (nodes less one), whatever the grid step.
MAX_SEGMENTS = 1_000_000


@dataclass(frozen=True)
class Terrain:
    """A route on a uniform distance grid.

    Node arrays (n + 1): ``distance`` [m], ``lat``/``lon`` [deg], ``elevation`` [m]
    (smoothed), ``elevation_raw`` [m] (resampled, spikes removed, not smoothed),
    ``curve_radius`` [m] (inf on a straight).
    Segment arrays (n), segment i from node i to i + 1: ``grade`` [-], ``heading``
    [rad] clockwise from north.
    ``step`` [m] is the grid spacing; ``gain``/``loss`` [m] use :data:`GAIN_DEADBAND`.
    ``junctions`` are the corners that turn at a single track point (see
    :mod:`cardgen.route.corners`): turns at junctions rather than bends of a road.
    ``knots`` are where the smoothed profile's grade changes, each with the 99 %
    range of its place (:func:`cardgen.route.profile_fit.knot_ranges`).
    """

    distance: np.ndarray
    lat: np.ndarray
    lon: np.ndarray
    elevation: np.ndarray
    elevation_raw: np.ndarray
    grade: np.ndarray
    heading: np.ndarray
    curve_radius: np.ndarray
    step: float
    gain: float
    loss: float
    gaps: tuple[float, ...] = ()  # [m] where gaps between track segments were joined
    junctions: tuple[tuple[float, float], ...] = ()  # [m] (start, end) of turns at a single track point
    knots: tuple[tuple[float, float, float], ...] = ()  # [m] (place, 99 % low, high) where the grade changes

    @property
    def length(self) -> float:
        """Route length [m]."""
        return float(self.distance[-1])

    def plane(self) -> np.ndarray:
        """The nodes on a local plane [m], x east and y north, centred on the route:
        equirectangular about the mean latitude, longitudes unwrapped across ±180°
        (:func:`cardgen.route.geodesy.local_plane`)."""
        lat0 = float(np.radians(np.mean(self.lat)))
        lon = np.degrees(np.unwrap(np.radians(self.lon)))
        xy = local_plane(self.lat, lon, lat0)
        xy -= xy.mean(axis=0)
        return xy


def running_median(elevation: Floats, points: int = SPIKE_POINTS) -> np.ndarray:
    """Median over ``points`` samples centred on each one, the ends padded with the
    first and last value (Tukey 1977)."""
    e = np.asarray(elevation, dtype=float)
    if e.size < points:
        return e.copy()
    half = points // 2
    padded = np.concatenate((np.full(half, e[0]), e, np.full(half, e[-1])))
    median: np.ndarray = np.median(sliding_window_view(padded, points), axis=1)
    return median


def remove_spikes(elevation: Floats, points: int = SPIKE_POINTS) -> np.ndarray:
    """Isolated spikes and dips replaced by the running median of ``points`` samples;
    every other value kept (a Hampel identifier).

    Notes
    -----
    A value is a spike when it lies more than :data:`SPIKE_SCALES` robust spreads
    (1.4826 × the median absolute deviation of its window, at least
    :data:`~cardgen.route.profile_fit.NOISE_FLOOR`) from its window's median. A running
    median alone would also cut the top off every sharp summit (by about one grid
    step's rise); monotone stretches and steps are kept either way.

    References
    ----------
    Tukey (1977), Exploratory Data Analysis. Pearson, R. K. (2002). Outliers in
    process modeling and identification. *IEEE Trans. Control Systems Technology*
    10(1):55–63. doi:10.1109/87.974338 (the Hampel identifier).
    """
    e = np.asarray(elevation, dtype=float)
    if e.size < points:
        return e.copy()
    median = running_median(e, points)
    half = points // 2
    padded = np.concatenate((np.full(half, e[0]), e, np.full(half, e[-1])))
    spread = 1.4826 * np.median(np.abs(sliding_window_view(padded, points) - median[:, None]), axis=1)
    spike = np.abs(e - median) > SPIKE_SCALES * np.maximum(spread, NOISE_FLOOR)
    return np.where(spike, median, e)


def smooth_elevation(elevation: Floats, step: float, noise: float | None = None) -> np.ndarray:
    """The elevation profile with its noise removed: straight grades joined at the
    knots the noise cannot explain (:func:`cardgen.route.profile_fit.fit_profile`).

    Parameters
    ----------
    elevation : array [m] on a uniform grid, spikes removed
    step : float [m] grid spacing
    noise : float [m] σ of the noise as independent errors at every node (see
        :func:`cardgen.route.profile_fit.grid_noise`); measured on ``elevation``
        itself when not given.

    Notes
    -----
    A step in grade stays a step: the fit neither overshoots it nor spreads it over a
    window, and a climb between flats gains what the data gain.

    References
    ----------
    Those of :mod:`cardgen.route.profile_fit`.
    """
    e = np.asarray(elevation, dtype=float)
    if noise is None:
        noise = point_noise(np.arange(e.size) * step, e)
    return fit_profile(e, step, noise).elevation


def elevation_gain(elevation: Floats, deadband: float = GAIN_DEADBAND) -> tuple[float, float]:
    """Total gain and loss with hysteresis.

    A rise (fall) is counted once the profile has moved ``deadband`` metres away from
    the last turning point, so noise smaller than the deadband adds nothing.

    Returns
    -------
    (gain, loss) [m], both ≥ 0.
    """
    turns = turning_points(elevation, deadband)
    steps = np.diff(np.asarray(elevation, dtype=float)[turns])
    return float(steps[steps > 0].sum()), float(-steps[steps < 0].sum())


def turning_points(elevation: Floats, deadband: float) -> np.ndarray:
    """Indices of the alternating lows and highs of a profile, with hysteresis.

    The first index is always included. A high (low) is confirmed once the profile
    has fallen (risen) more than ``deadband`` below (above) it; the last extreme
    counts when it lies more than ``deadband`` from the turning point before it.
    """
    e = np.asarray(elevation, dtype=float)
    n = e.size
    if n < 2:
        return np.arange(n)
    turns = [0]
    state = 0  # 1 climbing towards a high, -1 falling towards a low, 0 not yet either
    best = 0
    for i in _local_extrema(e)[1:]:
        x = e[i]
        if state == 0:
            if abs(x - e[turns[-1]]) > deadband:
                state, best = (1 if x > e[turns[-1]] else -1), i
        elif state * (x - e[best]) >= 0:  # further the same way: a new extreme
            best = i
        elif state * (e[best] - x) > deadband:  # turned by more than the deadband
            turns.append(best)
            state, best = -state, i
    if state != 0 and best != turns[-1]:
        turns.append(best)
    return np.asarray(turns)


def _local_extrema(e: np.ndarray) -> list[int]:
    """The first and last index and every index where the profile turns: only these
    can be turning points."""
    d = np.sign(np.diff(e))
    nz = np.flatnonzero(d)
    candidates = [0]
    if nz.size:
        change = nz[1:][d[nz[1:]] != d[nz[:-1]]]
        candidates.extend(change.tolist())
    candidates.append(e.size - 1)
    return candidates


def curve_radius(lat: np.ndarray, lon: np.ndarray, step: float, window: float = CURVE_WINDOW) -> np.ndarray:
    """Radius of the path's curve at each grid node.

    Notes
    -----
    R = L / |Δψ|: the path length L of a window centred on the node over the change
    of heading ψ across it (the course of :func:`~cardgen.route.geodesy.course`, so
    hairpins keep their full angle and the 180° meridian and the poles are no turns).
    Straight stretches give inf.
    """
    n = len(lat)
    heading = course(lat, lon)
    half = max(1, int(round(window / (2 * step))))
    radius = np.full(n, np.inf)
    if heading.size < 2 * half:
        return radius
    # heading[j + half] − heading[j]: the turn between segment j and segment j + half,
    # whose midpoints are half·step apart along the path around node j + (half+1)//2.
    turn = np.abs(heading[half:] - heading[:-half])
    centre = np.arange(turn.size) + (half + 1) // 2
    with np.errstate(divide="ignore"):
        r = (half * step) / turn
    radius[centre] = r
    return radius


#: Distance [m] a gap between track segments keeps in the joined route (none ridden).
GAP_SPAN = 0.5


def _gap_distances(track: Track, d: np.ndarray, keep: np.ndarray) -> list[float]:
    """Where each gap lies along the joined route [m]."""
    if not track.gaps:
        return []
    position = np.cumsum(keep) - 1  # index into d of each original point
    return [float(d[position[gap.index]]) for gap in track.gaps]


def _segment_count(track: Track, length: float, step: float) -> int:
    """Grid segments of a route ``length`` [m] long, refused before any array is
    made when the route is longer than :data:`MAX_ROUTE_LENGTH` or needs more than
    :data:`MAX_SEGMENTS` segments."""
    n = int(np.ceil(length / step))
    if length > MAX_ROUTE_LENGTH or n > MAX_SEGMENTS:
        raise GpxError(
            f"{track.path}: the route is {length / 1000:,.0f} km long ({n:,} steps of {step:g} m); "
            f"cardgen plans routes up to {MAX_ROUTE_LENGTH / 1000:,.0f} km ({MAX_SEGMENTS:,} steps): "
            "split it into stages, or check its coordinates"
        )
    return n


#: Points on each side of a join whose median elevations are made to meet: a logger's
#: first fixes after a pause are often tens of metres off, and one bad point must not
#: set the level of the whole next segment.
JOIN_POINTS = 5


def _join_step(elevation: np.ndarray, index: int) -> float:
    """The elevation step [m] removed at a join before point ``index``: the median of
    the first :data:`JOIN_POINTS` points after it less that of the last ones before."""
    before = elevation[max(0, index - JOIN_POINTS) : index]
    after = elevation[index : index + JOIN_POINTS]
    return float(np.median(after) - np.median(before))


def build_terrain(track: Track, step: float = GRID_STEP) -> Terrain:
    """Resample a :class:`~cardgen.route.gpx.Track` onto a uniform grid and derive
    the terrain.

    Raises
    ------
    GpxError
        When the route has no length, is longer than :data:`MAX_ROUTE_LENGTH`, or its
        elevation changes grade at more than
        :data:`~cardgen.route.profile_fit.MAX_KNOTS` places.
    """
    d = cumulative_distance(track.lat, track.lon)
    ele_in = track.elevation.copy()
    if track.gaps:  # a gap is not ridden: no distance across it, no elevation jump
        legs = np.diff(d)
        for gap in track.gaps:
            legs[gap.index - 1] = GAP_SPAN
            ele_in[gap.index :] -= _join_step(ele_in, gap.index)
        d = np.concatenate(([0.0], np.cumsum(legs)))
    keep = np.concatenate(([True], np.diff(d) > 0))  # drop repeated points
    d = d[keep]
    if d[-1] < 2 * step:
        raise GpxError(
            f"{track.path}: the route is {d[-1]:.0f} m long; cardgen needs at least {2 * step:.0f} m "
            "(are all points the same?)"
        )
    n = _segment_count(track, float(d[-1]), step)
    ele = remove_spikes(ele_in[keep])
    grid = np.linspace(0.0, d[-1], n + 1)
    grid_step = float(grid[1] - grid[0])
    lat = np.interp(grid, d, track.lat[keep])
    # longitudes unwrapped before interpolating, so a route across the 180° meridian
    # stays on it, then wrapped back into [−180°, 180°)
    unwrapped = np.degrees(np.unwrap(np.radians(track.lon[keep])))
    lon = (np.interp(grid, d, unwrapped) + 180.0) % 360.0 - 180.0
    raw = np.interp(grid, d, ele)
    noise = grid_noise(point_noise(d, ele_in[keep]), float(np.median(np.diff(d))), grid_step)
    try:
        fitted = fit_profile(raw, grid_step, noise)
    except RoughProfile as rough:
        raise GpxError(
            f"{track.path}: the elevation changes grade at more than {rough.limit:,} places over "
            f"{d[-1] / 1000:,.0f} km (one every {d[-1] / rough.limit:.0f} m or closer), more than "
            "cardgen fits in reasonable time; check the elevation data, or split the route into stages"
        ) from None
    smooth = fitted.elevation
    grade = np.diff(smooth) / grid_step
    heading = np.asarray(bearing(lat[:-1], lon[:-1], lat[1:], lon[1:]))
    radius = curve_radius(lat, lon, grid_step)
    # corners shorter than the window: the radius of the whole corner, from the
    # track's own points (the grid's interpolated points add nothing)
    junctions = []
    for corner in find_corners(track.lat[keep], unwrapped, d):
        on = (grid >= corner.start) & (grid <= corner.end)
        radius[on] = np.minimum(radius[on], corner.radius)
        if corner.junction:
            junctions.append((corner.start, corner.end))
    radius = np.maximum(radius, MIN_TURN_RADIUS)  # no turn on a road is tighter
    gap_at = tuple(_gap_distances(track, d, keep))
    for where in gap_at:  # the join is no curve and no turn
        near = np.abs(grid - where) <= CURVE_WINDOW
        radius[near] = np.inf
        junctions = [j for j in junctions if not (j[0] - CURVE_WINDOW <= where <= j[1] + CURVE_WINDOW)]
    gain, loss = elevation_gain(smooth)
    return Terrain(
        distance=grid,
        lat=lat,
        lon=lon,
        elevation=smooth,
        elevation_raw=raw,
        grade=grade,
        heading=heading,
        curve_radius=radius,
        step=grid_step,
        gain=gain,
        loss=loss,
        gaps=gap_at,
        junctions=tuple(junctions),
        knots=tuple(
            (float(k * grid_step), float(lo * grid_step), float(hi * grid_step))
            for k, lo, hi in zip(fitted.knots, fitted.knot_low, fitted.knot_high, strict=True)
        ),
    )


#: A route shorter than this [m] is probably not what was meant.
SHORT_ROUTE = 500.0
#: No ridden road is steeper than this over 100 m; steeper profiles usually have
#: elevations in feet or a broken elevation model (common practice, no published source).
STEEPEST_PLAUSIBLE = 0.35
#: A jump between neighbouring points larger than this [m] is damaged elevation data.
ELEVATION_JUMP = 50.0


def doubtful(track: Track, terrain: Terrain) -> list[str]:
    """Reasons to doubt the route: too short, implausibly steep, elevation jumps."""
    reasons = []
    if terrain.length < SHORT_ROUTE:
        reasons.append(f"the route is only {terrain.length:.0f} m long; is this the whole route?")
    k = max(1, int(round(100.0 / terrain.step)))
    if terrain.elevation.size > k:
        rise = np.abs(terrain.elevation[k:] - terrain.elevation[:-k]) / (k * terrain.step)
        steep = int(np.argmax(rise))
        if rise[steep] > STEEPEST_PLAUSIBLE:
            reasons.append(
                f"the grade reaches {rise[steep] * 100:.0f} % over 100 m near km "
                f"{terrain.distance[steep] / 1000:.1f}, steeper than any road: are the elevations in feet, "
                "or is the elevation data damaged?"
            )
    jumps = int(np.sum(np.abs(np.diff(track.elevation)) > ELEVATION_JUMP))
    if jumps:
        reasons.append(
            f"the elevation jumps by more than {ELEVATION_JUMP:.0f} m between neighbouring points "
            f"{jumps} time(s); the elevation data look damaged"
        )
    return reasons
