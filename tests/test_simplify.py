"""Lines thinned to print: the Ramer–Douglas–Peucker algorithm (Ramer 1972; Douglas &
Peucker 1973) and the profile's fills drawn with it. Every check measures the distance
from each dropped point to the thinned line by brute force over all its segments, an
independent computation (not the algorithm's own split-and-recurse)."""

import re
from types import SimpleNamespace

import numpy as np
import pytest

from cardgen.render import plots
from cardgen.render.simplify import douglas_peucker

#: How far [pt] the printed profile's thinned outline may stray from the full one.
PROMISED_PT = 0.1


def _distance_to_polyline(points: np.ndarray, line: np.ndarray) -> np.ndarray:
    """Each of ``points`` (n × 2) to the nearest point of the polyline ``line`` (m × 2),
    over every one of its segments (projection clamped to the segment's ends)."""
    a, b = line[:-1], line[1:]
    ab = b - a  # m-1 × 2
    ap = points[:, None, :] - a[None, :, :]  # n × m-1 × 2
    length2 = np.maximum((ab * ab).sum(axis=1), 1e-300)
    t = np.clip((ap * ab[None]).sum(axis=2) / length2, 0.0, 1.0)
    nearest = a[None] + t[..., None] * ab[None]
    return np.hypot(*(points[:, None, :] - nearest).transpose(2, 0, 1)).min(axis=1)


@pytest.mark.parametrize("tolerance", [0.05, 0.1, 0.5, 2.0])
def test_every_dropped_point_lies_within_the_tolerance_of_the_thinned_line(tolerance):
    rng = np.random.default_rng(7)
    x = np.cumsum(rng.uniform(0.05, 0.3, 2000))
    y = 20 * np.sin(x / 15) + np.cumsum(rng.normal(0, 0.05, x.size))
    kept = douglas_peucker(x, y, tolerance)
    assert kept[0] == 0 and kept[-1] == x.size - 1 and np.all(np.diff(kept) > 0)
    full = np.column_stack((x, y))
    assert _distance_to_polyline(full, full[kept]).max() <= tolerance + 1e-12
    assert kept.size < x.size / 3  # and it does thin


def test_a_line_that_doubles_back_keeps_its_turning_point():
    """The distance is to the segment, not to the infinite line: an out-and-back along
    one line keeps its far end (the distance to the line through start and finish is
    0 everywhere)."""
    x = np.concatenate((np.linspace(0, 10, 11), np.linspace(9, 0, 10)))
    y = np.zeros(x.size)
    kept = douglas_peucker(x, y, 0.1)
    assert 10 in kept
    full = np.column_stack((x, y))
    assert _distance_to_polyline(full, full[kept]).max() == 0.0


def test_collinear_points_go_and_corners_stay():
    x = np.array([0.0, 1, 2, 3, 4, 5, 6])
    y = np.array([0.0, 0, 0, 0, 1, 2, 3])  # a straight run, a corner at x = 3, a straight rise
    assert list(douglas_peucker(x, y, 0.01)) == [0, 3, 6]
    assert list(douglas_peucker(x[:2], y[:2], 0.01)) == [0, 1]
    # a spike 1 high: kept above 1; its feet lie 1/sqrt(5) = 0.447 from the chords
    # to its tip (worked by hand)
    sx, sy = np.arange(5.0), np.array([0.0, 0, 1, 0, 0])
    assert list(douglas_peucker(sx, sy, 1.1)) == [0, 4]
    assert list(douglas_peucker(sx, sy, 0.9)) == [0, 2, 4]
    assert list(douglas_peucker(sx, sy, 0.44)) == [0, 1, 2, 3, 4]


def _fills(svg: str) -> dict[str, list[np.ndarray]]:
    """The profile's filled polygons (not the colour bar's), by colour: each subpath's
    vertices in drawing points."""
    profile = svg[svg.index('<g id="axes_1">') : svg.index('<g id="axes_2">')]
    out: dict[str, list[np.ndarray]] = {}
    for d, colour in re.findall(r"<path d=\"(M [^\"]*)\"[^>]*?fill: ?(#[0-9a-f]{6})", profile):
        for sub in d.split("M ")[1:]:
            xy = np.array([float(v) for v in re.findall(r"-?\d+(?:\.\d+)?(?:e-?\d+)?", sub)]).reshape(-1, 2)
            out.setdefault(colour, []).append(xy)
    return out


def test_the_profiles_fill_stays_within_the_tolerance_of_the_full_one(monkeypatch):
    """The printed profile, drawn thinned and (with the tolerance set to 0) in full:
    the same bands and runs, every vertex of each full run within 0.1 pt of its
    thinned outline, measured in the SVG's own units (points of the drawing at its
    printed size), and fewer vertices."""
    d = np.arange(0.0, 40001.0, 10.0)  # 40 km: thinned to 1,000 stretches first
    e = 150 + 120 * np.sin(d / 3000) + 40 * np.sin(d / 700)
    grade = np.diff(e) / np.diff(d)
    terrain = SimpleNamespace(distance=d, elevation=e, grade=grade, length=float(d[-1]))
    thinned = _fills(plots.elevation_profile(terrain, [], width_in=5.1, height_in=1.9)[0])
    monkeypatch.setattr(plots, "TOLERANCE_PT", 0.0)
    full = _fills(plots.elevation_profile(terrain, [], width_in=5.1, height_in=1.9)[0])
    assert full.keys() == thinned.keys() and len(full) >= 4
    count = {"full": 0, "thinned": 0}
    for colour, runs in full.items():
        assert len(runs) == len(thinned[colour])
        for whole, thin in zip(runs, thinned[colour], strict=True):
            outline = np.vstack((thin, thin[:1]))  # closed
            # 0.1 pt (0.035 mm) is the bound the card promises, well under a printed
            # line's width (cardgen's own choice, no published source); SVG's 6 decimals
            assert _distance_to_polyline(whole, outline).max() <= PROMISED_PT + 1e-6
            count["full"] += len(whole)
            count["thinned"] += len(thin)
    # a curving profile keeps about half its vertices at 0.1 pt (the terrain's own
    # profile is straight grades joined at knots, and keeps far fewer)
    assert count["thinned"] < 0.6 * count["full"], count
