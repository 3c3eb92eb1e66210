"""Climbs and descents on a smoothed profile, with their difficulty.

References
----------
The FIETS index of the Dutch cycling magazine *Fiets*: H²/(10·D) + max(0, (T − 1000)/1000),
as restated by several independent secondary sources (no primary citation found).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from cardgen.route.terrain import Terrain
from cardgen.units import Floats, scalar_or_array

#: A climb gains at least this much [m] …
MIN_GAIN = 20.0
#: … at this average grade [-] or more.
MIN_AVG_GRADE = 0.03
#: A dip must lose more than this [m] to split a climb in two (and a rise to split
#: a descent).
DIP_TOLERANCE = 10.0
#: Longest gentler stretch [m] inside one climb.
MAX_GAP = 500.0
#: Window over which climbs are found, and the shortest pitch reported [m].
GRADE_WINDOW = 100.0
#: Neighbouring ground counts as part of the steepest pitch while it is at most this
#: much less steep [-]: half the 0.5-point step in which grades are printed.
PITCH_TOLERANCE = 0.0025


#: Our own plain-language bands on the FIETS index: (upper bound, words).
BANDS = ((0.5, "easy"), (1.5, "moderate"), (3.5, "hard"), (6.5, "very hard"), (np.inf, "extreme"))


def fiets_index(gain: Floats, length: Floats, top: Floats) -> Floats:
    """Difficulty of a climb by the FIETS index.

    Parameters
    ----------
    gain : float or array [m] height gained
    length : float or array [m]
    top : float or array [m] altitude of the top

    Returns
    -------
    float or array [-]; NaN where length ≤ 0.

    Notes
    -----
    FIETS = H²/(D·10) + max(0, (T − 1000)/1000)

    References
    ----------
    *Fiets* magazine's index, via secondary sources (see module docstring).
    """
    h = np.asarray(gain, dtype=float)
    d = np.asarray(length, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        score = h * h / (d * 10.0) + np.maximum(0.0, (np.asarray(top, dtype=float) - 1000.0) / 1000.0)
    return scalar_or_array(np.where(d > 0, score, np.nan))


def difficulty_band(score: float) -> str:
    """Plain words for a FIETS score."""
    for upper, words in BANDS:
        if score < upper:
            return words
    return BANDS[-1][1]


@dataclass(frozen=True)
class Descent:
    """A sustained fall between grid nodes ``start`` and ``end`` of a :class:`Terrain`.

    Attributes: ``start_distance``/``end_distance`` [m], ``length`` [m], ``height`` [m]
    lost, ``avg_grade`` [-] (negative), ``steepest_grade`` [-] over
    :data:`GRADE_WINDOW` (negative), ``top`` [m] highest elevation, ``tightest_radius``
    [m].
    """

    start: int
    end: int
    start_distance: float
    end_distance: float
    length: float
    height: float
    avg_grade: float
    steepest_grade: float
    top: float
    tightest_radius: float
    pitch_length: float = GRADE_WINDOW  # [m] the stretch ``steepest_grade`` is measured over


@dataclass(frozen=True)
class Climb(Descent):
    """A sustained rise: the fields of :class:`Descent` with ``height`` gained and
    positive grades, plus its difficulty: ``score`` (FIETS index) and ``band`` (our
    own words for the score)."""

    score: float = float("nan")
    band: str = ""


def steepest_pitch(
    elevation: np.ndarray, step: float, points: int, knots: Sequence[tuple[float, float, float]] = ()
) -> tuple[float, float]:
    """The steepest grade [-] over ``points`` steps of a smoothed profile, and the
    length [m] of the stretch it describes.

    Parameters
    ----------
    elevation : array [m] of the fitted profile (:mod:`cardgen.route.profile_fit`)
    step : float [m] grid spacing
    points : int  steps of the window
    knots : (place, low, high) [node index of ``elevation``, not whole] of the
        profile's knots and the 99 % ranges of their places

    Notes
    -----
    On straight pieces the grade of a stretch is the rise over its length. The
    stretch is the run of steps around the steepest ``points`` steps that are each at
    most :data:`PITCH_TOLERANCE` less steep than it; where it ends at a knot, it is
    counted from the latest place the knot's range allows to the earliest (so noise
    that moves a knot never makes the stretch longer than the ground's), and never
    shorter than ``points`` steps. A profile shorter than that is taken whole.
    """
    n = min(points, elevation.size - 1)
    if n < 1:
        return 0.0, 0.0
    rise = elevation[n:] - elevation[:-n]
    first = int(np.argmax(rise))
    grade = float(rise[first]) / (n * step)
    steep = np.diff(elevation) / step >= grade - PITCH_TOLERANCE
    inside = np.flatnonzero(steep[first : first + n])
    if inside.size == 0:
        return grade, n * step
    start = end = first + int(inside[0])
    while start > 0 and steep[start - 1]:
        start -= 1
    while end + 1 < steep.size and steep[end + 1]:
        end += 1
    begins, ends = float(start), float(end + 1)
    for place, low, high in knots:
        if start - 1 <= place <= start + 1:  # the knot where the run begins, to a step
            begins = high
        if end <= place <= end + 2:
            ends = low
    return grade, max(n, ends - begins) * step


def _find(
    terrain: Terrain,
    direction: int,
    min_gain: float,
    min_avg_grade: float,
    dip_tolerance: float,
    max_gap: float,
) -> list[dict[str, Any]]:
    e = terrain.elevation * direction  # descents are climbs of the negated profile
    step = terrain.step
    n = e.size
    k = max(1, min(int(round(GRADE_WINDOW / step)), n - 1))
    # 1. Stretches where every 100 m window rises at min_avg_grade or more.
    steep = (e[k:] - e[:-k]) >= min_avg_grade * k * step
    edges = np.diff(np.concatenate(([0], steep.astype(np.int8), [0])))
    runs = [
        [int(a), int(b) - 1 + k]
        for a, b in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True)
    ]
    # 2. Merge stretches across short, shallow dips (or flats) while the whole stays steep.
    merged: list[list[int]] = []
    for a, b in runs:
        if merged:
            pa, pb = merged[-1]
            gap_ok = (a - pb) * step <= max_gap
            dip = e[pb] - e[pb : max(a, pb) + 1].min()
            whole = (e[b] - e[pa]) / ((b - pa) * step)
            if gap_ok and dip <= dip_tolerance and whole >= min_avg_grade:
                merged[-1][1] = max(pb, b)
                continue
        merged.append([a, b])
    grade = np.diff(e) / step
    hills = []
    for start, end in merged:
        # 3. Trim each end to the first (last) segment that is itself as steep.
        first = np.flatnonzero(grade[start : start + k] >= min_avg_grade)
        last = np.flatnonzero(grade[end - k : end] >= min_avg_grade)
        if first.size and last.size:
            start, end = start + int(first[0]), end - k + int(last[-1]) + 1
        if end <= start:
            continue
        height = e[end] - e[start]
        length = (end - start) * step
        if height < min_gain or height / length < min_avg_grade:
            continue
        knots = [(p / step - start, lo / step - start, hi / step - start) for p, lo, hi in terrain.knots]
        steepest, pitch = steepest_pitch(e[start : end + 1], step, k, knots)
        top = float(terrain.elevation[start : end + 1].max())
        hills.append(
            dict(
                start=start,
                end=end,
                start_distance=float(terrain.distance[start]),
                end_distance=float(terrain.distance[end]),
                length=float(length),
                height=float(height),
                avg_grade=float(direction * height / length),
                steepest_grade=direction * steepest,
                top=top,
                tightest_radius=float(terrain.curve_radius[start : end + 1].min()),
                pitch_length=pitch,
            )
        )
    return hills


def find_climbs(
    terrain: Terrain,
    *,
    min_gain: float = MIN_GAIN,
    min_avg_grade: float = MIN_AVG_GRADE,
    dip_tolerance: float = DIP_TOLERANCE,
    max_gap: float = MAX_GAP,
) -> list[Climb]:
    """Sustained rises: at least ``min_gain`` metres at ``min_avg_grade`` or steeper.

    Stretches where every 100 m rises at ``min_avg_grade`` are joined across gaps of
    up to ``max_gap`` metres that lose no more than ``dip_tolerance`` metres, as long
    as the joined climb still averages ``min_avg_grade``; each end is then trimmed to
    the first (last) segment that is that steep.
    """
    climbs = []
    for found in _find(terrain, +1, min_gain, min_avg_grade, dip_tolerance, max_gap):
        score = float(fiets_index(found["height"], found["length"], found["top"]))
        climbs.append(Climb(**found, score=score, band=difficulty_band(score)))
    return climbs


def find_descents(
    terrain: Terrain,
    *,
    min_drop: float = MIN_GAIN,
    min_avg_grade: float = MIN_AVG_GRADE,
    rise_tolerance: float = DIP_TOLERANCE,
    max_gap: float = MAX_GAP,
) -> list[Descent]:
    """Sustained falls, the mirror of :func:`find_climbs`."""
    return [
        Descent(**found) for found in _find(terrain, -1, min_drop, min_avg_grade, rise_tolerance, max_gap)
    ]
