"""The profile's labels never print over each other: checkpoint labels ("Chk1", …)
above the plot and the climbs' numbers at their summits, measured as the drawing's
own label boxes (the fonts the SVG names, laid out by matplotlib's Agg renderer)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from cardgen.render import plots


def _route(summits_km: list[float], length_km: float = 60.0):
    """A route of bumps, one climb of 150–250 m to each summit (invented shapes)."""
    distance = np.arange(0.0, length_km * 1000 + 1, 10.0)
    elevation = np.full(distance.size, 100.0)
    climbs = []
    for i, km in enumerate(summits_km):
        height = 150.0 + 50 * (i % 3)
        bump = height * np.exp(-(((distance - km * 1000) / 1500.0) ** 2))
        elevation += bump
        climbs.append(SimpleNamespace(start_distance=km * 1000 - 2500, end_distance=km * 1000 + 2500))
    for climb in climbs:
        inside = (distance >= climb.start_distance) & (distance <= climb.end_distance)
        climb.top = float(elevation[inside].max())
    grade = np.gradient(elevation, distance)
    terrain = SimpleNamespace(distance=distance, elevation=elevation, grade=grade, length=distance[-1])
    return terrain, climbs


def _boxes(labels, fig):
    from matplotlib.backends.backend_agg import RendererAgg

    width, height = fig.get_size_inches() * fig.dpi
    renderer = RendererAgg(width, height, fig.dpi)
    return [plots._label_box(label, renderer).padded(-1.0) for label in labels]


def _touching(boxes) -> list[tuple[int, int]]:
    pairs = []
    for i, a in enumerate(boxes):
        for j in range(i + 1, len(boxes)):
            b = boxes[j]
            if min(a.x1, b.x1) > max(a.x0, b.x0) and min(a.y1, b.y1) > max(a.y0, b.y0):
                pairs.append((i, j))
    return pairs


CASES = {
    # a climb's summit under its checkpoint, the highest point of the route (the
    # demo day ride's climb 3 under Chk3 was this)
    "summit at a checkpoint": ([12.0, 30.0, 42.6], [("a", 12_400.0), ("b", 28_000.0), ("c", 42_600.0)]),
    # checkpoints a few hundred metres apart, each over a summit
    "crowded checkpoints": (
        [20.0, 21.0],
        [("a", 19_800.0), ("b", 20_100.0), ("c", 20_400.0), ("d", 21_000.0)],
    ),
    # summits 2 km apart on a 60 km route (climbs of 5 km meet), no checkpoints
    "crowded summits": ([10.0, 12.0, 14.0, 16.0], []),
}


@pytest.mark.parametrize("case", CASES)
@pytest.mark.parametrize(
    ("width_in", "height_in", "scale"), [(4.4, 1.67, 1.0), (4.4, 1.1, 1.0), (4.2, 2.6, 1.6)]
)
def test_no_label_touches_another(case, width_in, height_in, scale):
    summits, checkpoints = CASES[case]
    terrain, climbs = _route(summits)
    fig, labels = plots.profile_figure(terrain, climbs, checkpoints, "metric", width_in, height_in, scale)
    assert len(labels) == len(climbs) + len(checkpoints)
    assert _touching(_boxes(labels, fig)) == []


def test_a_summit_under_a_checkpoint_moves_its_number_not_the_checkpoint():
    """The number of climb 3 would sit where "Chk3" prints; it goes beside its summit."""
    summits, checkpoints = CASES["summit at a checkpoint"]
    terrain, climbs = _route(summits)
    fig, labels = plots.profile_figure(terrain, climbs, checkpoints, "metric", 4.4, 1.1, 1.0)
    chk3, climb3 = labels[2], labels[5]
    assert chk3.xyann == (0, 0)  # the checkpoint label stays in its row
    assert climb3.xyann != plots.CLIMB_MARK_SPOTS[0][0]  # not the first place: above the summit


def test_a_map_label_never_covers_a_climb_number():
    """On the route map a checkpoint's label goes where it covers no other mark: the
    demo's day ride printed "Chk1" over climb 2's number, which starts 5 km on, since
    the label had one place only (up and right of its mark). Here a straight road east,
    its climb's foot 600 m past the checkpoint."""
    from matplotlib.backends.backend_agg import RendererAgg

    fig = plots._figure(5.2, 2.6)
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_aspect("equal")
    ax.axis("off")
    ax.set_xlim(-1000.0, 21000.0)
    ax.set_ylim(-5000.0, 5000.0)
    ax.apply_aspect()
    climbs = [SimpleNamespace(start_distance=10600.0)]
    plots._map_marks(ax, lambda d: (d, 0.0), 20000.0, climbs, [("Bridge", 10000.0)], 1.0)
    renderer = RendererAgg(*(fig.get_size_inches() * fig.dpi), fig.dpi)
    boxes = {t.get_text(): plots._label_box(t, renderer).padded(-1.0) for t in ax.texts if t.get_text()}
    assert set(boxes) == {"1", "Chk1"}
    assert plots._overlap(boxes["Chk1"], [boxes["1"]]) == 0
