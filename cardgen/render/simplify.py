"""Lines thinned to what print can show: the Ramer–Douglas–Peucker algorithm.

A drawing's renderer (WeasyPrint, a browser) spends its time on the points it is
given, and the PDF carries every one of them; points that lie within a small fraction
of a printed line's width of the chord between their neighbours change nothing a
reader can see.
"""

from __future__ import annotations

import numpy as np

#: How far [pt] a thinned line may stray from the full one, measured on the drawing
#: at its printed size: 0.1 pt is 0.035 mm, well under a printed hairline (0.1 mm)
#: and under half the profile's 0.8 pt outline, which covers the filled edge.
TOLERANCE_PT = 0.1


def douglas_peucker(x, y, tolerance: float) -> np.ndarray:
    """Indices of the points of the polyline (``x``, ``y``) that the
    Ramer–Douglas–Peucker algorithm keeps at ``tolerance``, in order; the first and
    the last are always kept.

    Parameters
    ----------
    x, y : array_like
        The polyline's points, in one unit of length on both axes (points [pt] of the
        printed drawing, say).
    tolerance : float
        The greatest distance [same unit] a dropped point may lie from the segment of
        the thinned line that replaces it. 0 keeps every point not exactly on its
        chord.

    Returns
    -------
    numpy.ndarray
        Indices into ``x`` and ``y``, increasing.

    Notes
    -----
    Each stretch between two kept points keeps the point farthest from the segment
    joining them while that distance exceeds ``tolerance``, and is split there. The
    distance is to the segment (the projection clamped to its ends), not to the
    infinite line, so every dropped point lies within ``tolerance`` of the thinned
    polyline, even on a line that doubles back.

    References
    ----------
    Ramer, U. (1972). An iterative procedure for the polygonal approximation of plane
    curves. Computer Graphics and Image Processing 1(3), 244–256.
    doi:10.1016/S0146-664X(72)80017-0.
    Douglas, D. H. & Peucker, T. K. (1973). Algorithms for the reduction of the number
    of points required to represent a digitized line or its caricature. The Canadian
    Cartographer 10(2), 112–122. doi:10.3138/FM57-6770-U75U-7727.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.size
    if n <= 2:
        return np.arange(n)
    keep = np.zeros(n, dtype=bool)
    keep[0] = keep[-1] = True
    stack = [(0, n - 1)]
    while stack:
        a, b = stack.pop()
        if b - a < 2:
            continue
        far, distance = _farthest(x[a : b + 1], y[a : b + 1])
        if distance > tolerance:
            middle = a + far
            keep[middle] = True
            stack += [(a, middle), (middle, b)]
    return np.flatnonzero(keep)


def _farthest(x: np.ndarray, y: np.ndarray) -> tuple[int, float]:
    """The index (within the stretch) of the inner point farthest from the segment
    joining the stretch's ends, and its distance."""
    dx, dy = x[-1] - x[0], y[-1] - y[0]
    px, py = x[1:-1] - x[0], y[1:-1] - y[0]
    length2 = dx * dx + dy * dy
    t = np.clip((px * dx + py * dy) / length2, 0.0, 1.0) if length2 > 0 else np.zeros(px.size)
    distance = np.hypot(px - t * dx, py - t * dy)
    i = int(np.argmax(distance))
    return i + 1, float(distance[i])
