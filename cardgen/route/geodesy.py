"""Distances, bearings and a local plane on the WGS84 sphere of mean radius.

References
----------
Sinnott, R. W. (1984). Virtues of the haversine. *Sky and Telescope* 68(2):159.
Moritz, H. (2000). Geodetic Reference System 1980. *Journal of Geodesy* 74:128–133
(mean Earth radius R₁ = (2a + b)/3).
Snyder, J. P. (1987). *Map Projections — A Working Manual*. USGS Professional Paper
1395, §12 (the equirectangular projection).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from cardgen.units import Floats, scalar_or_array

#: Mean radius R₁ = (2a + b)/3 of the WGS84 ellipsoid [m].
EARTH_RADIUS = 6371008.8


def cumulative_distance(lat: Floats, lon: Floats) -> np.ndarray:
    """Distance along a polyline of WGS84 points, from the first point.

    Parameters
    ----------
    lat, lon : array [deg]

    Returns
    -------
    array [m], same length, starting at 0.

    Notes
    -----
    Haversine on a sphere of the mean Earth radius:
    d = 2R·asin√(sin²(Δφ/2) + cos φ₁·cos φ₂·sin²(Δλ/2)). Within 0.6 % of the
    ellipsoidal geodesic (Karney 2013) on 1 km legs at any latitude.

    References
    ----------
    Sinnott (1984), Sky and Telescope 68:159; Moritz (2000), J. Geodesy 74:128.
    """
    phi = np.radians(np.asarray(lat, dtype=float))
    lam = np.radians(np.asarray(lon, dtype=float))
    h = np.sin(np.diff(phi) / 2) ** 2 + np.cos(phi[:-1]) * np.cos(phi[1:]) * np.sin(np.diff(lam) / 2) ** 2
    step = 2 * EARTH_RADIUS * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0)))
    return np.concatenate(([0.0], np.cumsum(step)))


def bearing(lat1: Floats, lon1: Floats, lat2: Floats, lon2: Floats) -> Floats:
    """Initial great-circle bearing from point 1 to point 2.

    Returns
    -------
    array [rad], clockwise from north, in [0, 2π).

    References
    ----------
    Sinnott (1984), Sky and Telescope 68:159 (spherical trigonometry).
    """
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dl = np.radians(np.asarray(lon2) - np.asarray(lon1))
    y = np.sin(dl) * np.cos(p2)
    x = np.cos(p1) * np.sin(p2) - np.sin(p1) * np.cos(p2) * np.cos(dl)
    return scalar_or_array(np.mod(np.arctan2(y, x), 2 * np.pi))


def local_plane(lat: ArrayLike, lon: ArrayLike, lat0: float) -> np.ndarray:
    """Points on a plane [m] around latitude ``lat0`` [rad]: x east, y north.

    Notes
    -----
    Equirectangular: x = R·λ·cos φ₀, y = R·φ (Snyder 1987, §12); distances within
    about 0.1 % over a few kilometres of φ₀.
    """
    phi, lam = np.radians(np.asarray(lat, dtype=float)), np.radians(np.asarray(lon, dtype=float))
    return np.column_stack((lam * np.cos(lat0) * EARTH_RADIUS, phi * EARTH_RADIUS))


def course(lat: ArrayLike, lon: ArrayLike) -> np.ndarray:
    """The direction of travel of each leg [rad], unwrapped: the first leg's bearing,
    then the sum of the signed turns (right positive) at every point.

    Notes
    -----
    The turn at point p between legs a = p − p₋ and b = p₊ − p (unit vectors on the
    sphere, legs projected onto the tangent plane at p) is
    −atan2(p·(a × b), a·b): it needs neither bearings nor their wrap-around, so a path
    across the 180° meridian or over a pole turns only where it really turns.
    """
    la, lo = np.asarray(lat, dtype=float), np.asarray(lon, dtype=float)
    phi, lam = np.radians(la), np.radians(lo)
    p = np.column_stack((np.cos(phi) * np.cos(lam), np.cos(phi) * np.sin(lam), np.sin(phi)))
    first = bearing(la[0], lo[0], la[1], lo[1]) if p.shape[0] > 1 else 0.0
    if p.shape[0] < 3:
        return np.full(max(p.shape[0] - 1, 0), float(first))
    mid = p[1:-1]
    a = mid - p[:-2]
    b = p[2:] - mid
    a -= mid * np.sum(a * mid, axis=1, keepdims=True)  # onto the tangent plane at the point
    b -= mid * np.sum(b * mid, axis=1, keepdims=True)
    turn = -np.arctan2(np.sum(mid * np.cross(a, b), axis=1), np.sum(a * b, axis=1))
    return float(first) + np.concatenate(([0.0], np.cumsum(turn)))
