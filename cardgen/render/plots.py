"""Plots as SVG text, with matplotlib's object API on the Agg-free SVG backend (no
pyplot state). Each function returns (svg, alt text). The data are thinned to the
print resolution first: a card is about 130 mm wide, so ~1,000 points is finer than
the eye or the printer can tell, and keeps the SVG small for WeasyPrint; the profile's filled bands carry its outline
thinned further, to within 0.1 pt of it at the printed size (:mod:`cardgen.render.simplify`).

Colours: the colour-blind-safe "cividis" colormap (Nuñez, Anderton & Renslow 2018,
PLoS ONE 13(7):e0199239), whose lightness rises steadily along it. The profile is
filled by steepness (the grade up or down), reversed so that steeper is darker: it
reads the same printed in black and white.
"""

from __future__ import annotations

import io
import logging
import warnings
from collections.abc import Callable, Sequence
from types import ModuleType
from typing import TYPE_CHECKING, Any

import numpy as np

from cardgen.render import format as fmt
from cardgen.render.simplify import TOLERANCE_PT, douglas_peucker
from cardgen.units import KMH_PER_MS, M_PER_FT, M_PER_MI, MPH_PER_MS

if TYPE_CHECKING:
    from matplotlib.figure import Figure

MAX_POINTS = 1000
GRADE_RANGE = 12.0  # [%] the colour scale runs from flat to 12 % up or down
INK = "#1a1a1a"
#: Type sizes [pt] of the plots at their printed size: nothing on a card is smaller
#: than 7.5 pt (arm's length on A5).
SMALLEST_PT = 7.5
LABEL_PT = 8.0


def _figure(width_in: float, height_in: float) -> Figure:
    from matplotlib.backends.backend_svg import FigureCanvasSVG
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width_in, height_in))
    FigureCanvasSVG(fig)
    return fig


def _svg(fig: Figure) -> str:
    import matplotlib

    buffer = io.StringIO()
    # A name with a character the font lacks draws a box; that is no reason to write
    # to the terminal (and the alt text and tables carry the name anyway).
    logging.getLogger("matplotlib").setLevel(logging.ERROR)
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Glyph .* missing from", category=UserWarning)
        return _savefig(fig, buffer, matplotlib)


def _savefig(fig: Figure, buffer: io.StringIO, matplotlib: ModuleType) -> str:
    with matplotlib.rc_context(
        {"svg.hashsalt": "cardgen", "svg.fonttype": "none", "font.family": "DejaVu Sans"}
    ):
        fig.savefig(
            buffer,
            format="svg",
            metadata={"Date": None, "Creator": "cardgen"},
            bbox_inches="tight",
            pad_inches=0.03,
        )
    text = buffer.getvalue()
    # the XML prolog and DOCTYPE are not wanted when the SVG is inlined in HTML
    return text[text.index("<svg") :]


def thin_index(n: int, max_points: int = MAX_POINTS) -> np.ndarray:
    """Indices of every k-th of ``n`` points (always keeping the last) so that at most
    ``max_points`` remain."""
    k = max(1, int(np.ceil(n / max_points)))
    return np.unique(np.concatenate((np.arange(0, n, k), [n - 1])))


def thin(distance: Any, elevation: Any, max_points: int = MAX_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Every k-th point (always keeping the last) so that at most ``max_points`` remain."""
    idx = thin_index(len(distance), max_points)
    return np.asarray(distance)[idx], np.asarray(elevation)[idx]


def thinned_grade(grade: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """The terrain's own segment grades [-] averaged over each thinned stretch
    (``idx[j]`` to ``idx[j + 1]``): the grade the climb table reads, never one made
    again from the thinned points."""
    grade = np.asarray(grade, dtype=float)
    return np.add.reduceat(grade, idx[:-1]) / np.diff(idx)


def elevation_profile(
    terrain: Any,
    climbs: Sequence[Any],
    checkpoints: Sequence[tuple[str, float]] = (),
    units: str = "metric",
    *,
    name: str = "",
    width_in: float = 6.6,
    height_in: float = 2.4,
    text_scale: float = 1.0,
) -> tuple[str, str]:
    """Elevation against distance, filled by grade, climbs numbered, checkpoints marked.

    ``climbs`` are Climb objects (numbered in order), ``checkpoints`` (name, distance)
    pairs; ``text_scale`` enlarges every label (large print). Returns (svg, alt text).
    """
    fig, _ = profile_figure(terrain, climbs, checkpoints, units, width_in, height_in, text_scale)
    return _svg(fig), _profile_alt(terrain, climbs, checkpoints, units, name)


def profile_figure(terrain, climbs, checkpoints, units, width_in, height_in, text_scale):
    """The figure of :func:`elevation_profile` and its labels (checkpoints, then
    climbs: :func:`place_profile_labels`)."""
    k = text_scale
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import BoundaryNorm
    from matplotlib.patches import PathPatch

    imperial = units == "imperial"
    x_scale = 1 / M_PER_MI if imperial else 1 / 1000
    y_scale = 1 / M_PER_FT if imperial else 1.0
    idx = thin_index(len(terrain.distance))
    d, e = terrain.distance[idx], terrain.elevation[idx]
    x, y = d * x_scale, e * y_scale
    grade = thinned_grade(terrain.grade, idx) * 100
    bounds = np.arange(0.0, GRADE_RANGE + 0.1, 2.0)
    cmap = colormaps["cividis_r"]  # steeper = darker
    norm = BoundaryNorm(bounds, cmap.N, extend="max")
    steep = np.abs(grade)
    bins = np.digitize(steep, bounds)
    base = min(y.min(), 0.0) if y.min() < 0 else y.min() - 0.08 * max(np.ptp(y), 10)
    top = y.max() + 0.25 * max(np.ptp(y), 10)
    fig = _figure(width_in, height_in)
    ax = fig.add_subplot()
    # points per data unit of the printed drawing, at most (the axes are smaller than
    # the figure): the fills' outlines are thinned to within TOLERANCE_PT of it
    scale = (72.0 * width_in / (x[-1] - x[0]), 72.0 * height_in / (top - base))
    for colour, path in _grade_fills(x, y, steep, bins, lambda s: cmap(norm(s)), base, scale).items():
        ax.add_patch(PathPatch(path, facecolor=colour, edgecolor=colour, linewidth=0.4))
    ax.plot(x, y, color=INK, linewidth=0.8)
    ax.set_xlim(x[0], x[-1])
    ax.set_ylim(base, top)
    ax.set_xlabel("distance (mi)" if imperial else "distance (km)", fontsize=LABEL_PT * k, color=INK)
    ax.set_ylabel("elevation (ft)" if imperial else "elevation (m)", fontsize=LABEL_PT * k, color=INK)
    ax.tick_params(labelsize=SMALLEST_PT * k, colors=INK)
    for spine in ("top", "right"):
        ax.spines[spine].set_visible(False)
    bar = fig.colorbar(
        ScalarMappable(norm=norm, cmap=cmap), ax=ax, pad=0.01, fraction=0.04, ticks=bounds[::2]
    )
    bar.set_label("grade up or down (%)", fontsize=SMALLEST_PT * k, color=INK)
    bar.ax.tick_params(labelsize=SMALLEST_PT * k, colors=INK)
    # the labels go on last: the colour bar takes its room from the axes first, so
    # the boxes measured below are where the labels print
    tops = [
        (climb.top * y_scale, 0.5 * (climb.start_distance + climb.end_distance) * x_scale) for climb in climbs
    ]
    for where in (where for _, where in checkpoints):
        ax.axvline(where * x_scale, color=INK, linewidth=0.7, linestyle=(0, (3, 2)))
    labels = place_profile_labels(
        fig, ax, [(x, y) for y, x in tops], [w * x_scale for _, w in checkpoints], top, k
    )
    return fig, labels


def _grade_fills(x, y, steep, bins, colour_of, base: float, scale: tuple[float, float]) -> dict:
    """The profile's fill: one compound path per grade band (a handful of SVG elements,
    not one per run: the renderer's time goes with their number), each run of one band
    a polygon from the profile down to ``base``, in the colour (``colour_of``) of its
    drawn stretches' mean steepness (``steep`` [%], one per stretch, in bands
    ``bins``). The profile's outline in them is thinned
    (:func:`cardgen.render.simplify.douglas_peucker`, at ``scale`` points per data
    unit on x and y) to within :data:`~cardgen.render.simplify.TOLERANCE_PT` of the
    full one, keeping every point where the band changes; the bottom edge is a single
    segment. Edges in the face colour hide the hairline seams between neighbouring
    runs. Returns {colour: path}."""
    from matplotlib.path import Path as MplPath

    kept = np.zeros(x.size, dtype=bool)
    kept[douglas_peucker(x * scale[0], y * scale[1], TOLERANCE_PT)] = True
    changes = np.flatnonzero(np.diff(bins)) + 1  # where a run of one band ends
    kept[changes] = True
    by_band: dict[Any, list[Any]] = {}
    for start, end in zip(
        np.concatenate(([0], changes)), np.concatenate((changes, [x.size - 1])), strict=True
    ):
        top = np.flatnonzero(kept[start : end + 1]) + start
        # down to the base and back along it; the last vertex only closes the polygon
        # (matplotlib ignores a closed path's last vertex)
        outline = np.column_stack(
            (
                np.concatenate((x[top], [x[end], x[start], x[start]])),
                np.concatenate((y[top], [base, base, y[start]])),
            )
        )
        colour = colour_of(float(np.mean(steep[start:end])))
        by_band.setdefault(colour, []).append(MplPath(outline, closed=True))
    return {colour: MplPath.make_compound_path(*paths) for colour, paths in by_band.items()}


#: Where a climb's number may go around its summit, as (x, y) in points from it with
#: its alignment, in order of preference: above, left, right, higher up (to clear a
#: neighbour's number), below.
#: Where a checkpoint's label may go on the route map, from its mark [pt]: (offset, ha,
#: va), in order of preference (the first that covers no other mark).
MAP_LABEL_SPOTS = (
    ((5, 4), "left", "bottom"),
    ((-5, 4), "right", "bottom"),
    ((5, -4), "left", "top"),
    ((-5, -4), "right", "top"),
    ((0, 7), "center", "bottom"),
    ((0, -7), "center", "top"),
    ((0, 16), "center", "bottom"),
    ((0, -16), "center", "top"),
)
CLIMB_MARK_SPOTS = (
    ((0, 7), "center", "bottom"),
    ((-8, 3), "right", "bottom"),
    ((8, 3), "left", "bottom"),
    ((-8, 17), "right", "bottom"),
    ((8, 17), "left", "bottom"),
    ((0, -8), "center", "top"),
)


#: At most this many rows of checkpoint labels above the profile.
CHECKPOINT_ROWS = 4


def _overlap(box, others) -> float:
    """The area ``box`` shares with the boxes ``others`` (display units)."""
    total = 0.0
    for other in others:
        w = min(box.x1, other.x1) - max(box.x0, other.x0)
        h = min(box.y1, other.y1) - max(box.y0, other.y0)
        total += max(w, 0.0) * max(h, 0.0)
    return total


def _label_box(label, renderer):
    """The box a label prints in, its round background included (display units)."""
    from matplotlib.transforms import Bbox

    box = label.get_window_extent(renderer)
    patch = label.get_bbox_patch()
    if patch is not None:
        label.update_bbox_position_size(renderer)
        box = Bbox.union([box, patch.get_window_extent(renderer)])
    return box.padded(1.0)


def place_profile_labels(fig, ax, summits, checkpoints, top: float, k: float = 1.0) -> list:
    """Put the checkpoint labels ("Chk1", … above the plot, at ``checkpoints`` [x in
    data units]) and the climb numbers (at their ``summits``, (x, y) in data units) on
    the profile so that no label touches another: a checkpoint label that would touch
    the one before it rises by a line; a climb number takes the first place of
    :data:`CLIMB_MARK_SPOTS` that touches no label placed before it, or the one that
    touches least. Boxes are measured with the text's own font (Agg renderer).

    Returns the labels, checkpoints first (their boxes are what tests measure)."""
    from matplotlib.backends.backend_agg import RendererAgg

    width, height = fig.get_size_inches() * fig.dpi
    renderer = RendererAgg(width, height, fig.dpi)
    placed: list = []
    boxes: list = []
    for number, x in enumerate(checkpoints, 1):
        label, box = _checkpoint_label(ax, number, (x, top), k, boxes, renderer)
        placed.append(label)
        boxes.append(box)
    for number, summit in enumerate(summits, 1):
        label, box = _climb_mark(ax, number, summit, k, boxes, renderer)
        placed.append(label)
        boxes.append(box)
    return placed


def _checkpoint_label(ax, number: int, xy, k: float, boxes: list, renderer):
    """ "Chk<number>" above the plot at ``xy``, risen by a line at a time (at most
    :data:`CHECKPOINT_ROWS` rows) until it touches none of ``boxes``. Returns the
    label and its box."""
    # short, upright labels above the plot; the alt text and tables give the names
    rise = 0.0
    while True:
        label = ax.annotate(
            f"Chk{number}",
            xy,
            xytext=(0, rise),
            textcoords="offset points",
            fontsize=SMALLEST_PT * k,
            ha="center",
            va="bottom",
            color=INK,
            annotation_clip=False,
        )
        box = _label_box(label, renderer)
        if rise >= CHECKPOINT_ROWS * SMALLEST_PT * k or not _overlap(box, boxes):
            return label, box
        label.remove()
        rise += SMALLEST_PT * k * 1.4


def _climb_mark(ax, number: int, summit, k: float, boxes: list, renderer):
    """A climb's number in a dark circle at the first place of
    :data:`CLIMB_MARK_SPOTS` around its ``summit`` that touches none of ``boxes``
    (else where it touches least). Returns the label and its box."""

    def mark(offset, ha: str, va: str):
        return ax.annotate(
            str(number),
            summit,
            xytext=(offset[0] * k, offset[1] * k),
            textcoords="offset points",
            ha=ha,
            va=va,
            fontsize=8 * k,
            fontweight="bold",
            color="white",
            bbox={"boxstyle": "circle,pad=0.25", "facecolor": INK, "edgecolor": "none"},
            annotation_clip=False,
        )

    return _first_free(mark, CLIMB_MARK_SPOTS, boxes, renderer)


def _first_free(make, spots, boxes: list, renderer):
    """The label ``make(offset, ha, va)`` makes at the first of ``spots`` where it
    touches none of ``boxes``, else where it touches least (the others are removed).
    Returns the label and its box."""
    best: tuple[float, Any, Any] | None = None
    for offset, ha, va in spots:
        label = make(offset, ha, va)
        box = _label_box(label, renderer)
        touched = _overlap(box, boxes)
        if best is not None and touched >= best[0]:
            label.remove()
            continue
        if best is not None:
            best[1].remove()
        best = (touched, label, box)
        if not touched:
            break
    assert best is not None  # spots is not empty
    return best[1], best[2]


def _profile_alt(
    terrain: Any, climbs: Sequence[Any], checkpoints: Sequence[tuple[str, float]], units: str, name: str
) -> str:
    """The elevation profile in words, for screen readers and print."""
    parts = [
        f"Elevation profile{' of ' + name if name else ''}: {fmt.distance(terrain.length, units)}, "
        f"from {fmt.height(float(terrain.elevation.min()), units)} to "
        f"{fmt.height(float(terrain.elevation.max()), units)}."
    ]
    for number, climb in enumerate(climbs, 1):
        parts.append(
            f"Climb {number}: {fmt.distance(climb.start_distance, units)} to "
            f"{fmt.distance(climb.end_distance, units)}, {fmt.height(climb.height, units)} at "
            f"{fmt.grade(climb.avg_grade)} average."
        )
    if checkpoints:
        parts.append(
            "Checkpoints (Chk1, Chk2, …): "
            + ", ".join(f"{label} at {fmt.distance(where, units)}" for label, where in checkpoints)
            + "."
        )
    parts.append("Colour shows the grade; the tables give the same numbers.")
    return " ".join(parts)


#: Riders on one power chart drawn one by one; more are drawn one curve per vehicle
#: kind (a legend of hundreds would cover the plot).
CURVES_PER_RIDER_UP_TO = 8


def _curve_groups(rows, kinds) -> list[tuple[str, list[Any]]]:
    """(legend label, climb rows) of each curve: each rider when there are few, else
    each vehicle kind with its riders counted."""
    if kinds is None or len(rows) <= CURVES_PER_RIDER_UP_TO:
        return [(label, [row]) for label, row in rows]
    groups: dict[str, list[Any]] = {}
    for (_, row), kind in zip(rows, kinds, strict=True):
        groups.setdefault(kind, []).append(row)
    return [
        (f"{kind} ({len(members)} rider{'s' if len(members) > 1 else ''})", members)
        for kind, members in groups.items()
    ]


def power_curves(
    rows,
    units: str = "metric",
    *,
    kinds=None,
    width_in: float = 6.6,
    height_in: float = 2.6,
    legend_below: bool = False,
):
    """Power needed against speed on one climb's average grade: one line per rider,
    or, for more than :data:`CURVES_PER_RIDER_UP_TO` riders, one per vehicle kind
    (``kinds``, one per row: the curve of the kind's median rider by power, every
    rider of the kind marked where they ride). Each rider is marked at their planned
    average speed there, assist included. ``rows`` is a list of (label, climb row of
    the rider's plan); the curves are the plan's own (the climb's grade, mean wind and
    air density). ``legend_below`` puts the legend under the plot (a phone's narrow
    drawing, where it would cover the curves). Returns (svg, alt text)."""
    from matplotlib import colormaps

    imperial = units == "imperial"
    to_shown = MPH_PER_MS if imperial else KMH_PER_MS
    fig = _figure(width_in, height_in)
    ax = fig.add_subplot()
    markers = ["o", "s", "^", "D", "v", "P", "X", "*"]
    styles = ["-", "--", "-.", ":", (0, (5, 1, 1, 1, 1, 1))]
    groups = _curve_groups(rows, kinds)
    shades = colormaps["cividis"](np.linspace(0.0, 0.75, max(2, len(groups))))
    alt = []
    climb = rows[0][1].climb
    for i, (label, members) in enumerate(groups):
        ordered = sorted(members, key=lambda r: r.power_at_effort)
        speeds, watts = ordered[(len(ordered) - 1) // 2].power_curve
        ax.plot(
            speeds * to_shown,
            watts,
            color=shades[i],
            linestyle=styles[i % len(styles)],
            linewidth=1.3,
            label=_literal(label),
            marker=markers[i % len(markers)],
            markevery=(i * 2, 12),
            markersize=3.5,
        )
        ax.plot(
            [r.speed_at_effort * to_shown for r in members],
            [r.power_at_effort for r in members],
            color=shades[i],
            marker=markers[i % len(markers)],
            markersize=7 if len(members) == 1 else 4.5,
            markeredgecolor=INK,
            markeredgewidth=0.6,
            linestyle="none",
        )
        alt.append(_curve_alt(label, members, units))
    ax.set_xlabel("speed (mph)" if imperial else "speed (km/h)", fontsize=8, color=INK)
    ax.set_ylabel("power needed (W)", fontsize=8, color=INK)
    ax.set_ylim(0, None)
    ax.tick_params(labelsize=SMALLEST_PT, colors=INK)
    ax.grid(color="#bbbbbb", linewidth=0.4)
    for spine in ("top", "right"):
        ax.spines[spine].set_visible(False)
    # a fixed place: matplotlib's search for the best one grows with the points drawn
    place = {"loc": "upper left", "bbox_to_anchor": (-0.15, -0.22)} if legend_below else {"loc": "upper left"}
    for entry in ax.legend(fontsize=SMALLEST_PT, frameon=False, **place).get_texts():
        entry.set_parse_math(False)
    each = "each rider" if len(groups) == len(rows) else "each vehicle kind (its median rider)"
    text = (
        f"Power needed against speed on a steady {fmt.grade(climb.avg_grade)} grade (the hardest climb's "
        f"average), for {each}; markers show where each rider rides it: " + "; ".join(alt) + "."
    )
    return _svg(fig), text


def _curve_alt(label: str, members: Sequence[Any], units: str) -> str:
    """The text of one curve: where its rider rides the climb, or its riders' range."""
    if len(members) == 1:
        row = members[0]
        at, need = row.speed_at_effort, row.power_at_effort
        assist = f" with assist {row.assist_name}" if row.assist_name and row.assist_level else ""
        return (
            f"{label} rides it at about {fmt.speed(at, units)}{assist}, which takes {fmt.power(need)} in all"
        )
    speeds = sorted(r.speed_at_effort for r in members)
    watts = sorted(r.power_at_effort for r in members)
    return (
        f"{label} ride it at {fmt.speed(speeds[0], units)} to {fmt.speed(speeds[-1], units)}, "
        f"taking {fmt.power(watts[0])} to {fmt.power(watts[-1])} in all"
    )


def _literal(label: str) -> str:
    """A legend label shown as written: one starting with "_" would be hidden by
    matplotlib, so it gets a zero-width space in front. (Math parsing is switched off
    on every text that shows a name.)"""
    return "\u200b" + label if label.startswith("_") else label


def route_map(
    terrain: Any,
    climbs: Sequence[Any],
    checkpoints: Sequence[tuple[str, float]] = (),
    units: str = "metric",
    *,
    name: str = "",
    width_in: float = 5.2,
    height_in: float = 2.6,
    text_scale: float = 1.0,
) -> tuple[str, str]:
    """Where the route goes, drawn from the track alone (no tiles, no network): the
    outline on a local plane (equirectangular about the route's mean latitude, true to
    scale within about 0.1 % over a few tens of km; Snyder 1987, §12), start (circle)
    and finish (square), arrows in the direction of travel, checkpoints (Chk1, …),
    climb numbers at their feet, a scale bar and a north arrow. Ink and greys only, so
    it reads in black and white and for colour-blind readers. ``text_scale`` enlarges
    every label and mark (large print). Returns (svg, alt text).
    """
    xy = terrain.plane()
    step = max(1, xy.shape[0] // (4 * MAX_POINTS))
    x, y = xy[::step, 0], xy[::step, 1]
    d = terrain.distance[::step]
    fig = _figure(width_in, height_in)
    ax = fig.add_axes((0.0, 0.0, 1.0, 1.0))
    ax.set_aspect("equal")
    ax.axis("off")
    ax.plot(x, y, color="#8c8c8c", linewidth=3.2, solid_capstyle="round")
    ax.plot(x, y, color=INK, linewidth=1.0)

    def at(distance: float) -> tuple[float, float]:
        return float(np.interp(distance, d, x)), float(np.interp(distance, d, y))

    length = float(terrain.length)
    # room around the route (set first: the labels are placed where they print), the
    # marks, then a scale bar of a round length and a north arrow
    span = (float(np.ptp(x)) or 100.0, float(np.ptp(y)) or 100.0)
    pad = 0.12 * max(span)
    ax.set_xlim(x.min() - pad, x.max() + pad)
    ax.set_ylim(y.min() - pad, y.max() + pad)
    ax.apply_aspect()  # the equal aspect moves the axes at drawing: measure where they print
    ends = _map_marks(ax, at, length, climbs, checkpoints, text_scale)
    _map_scale(ax, (x.min(), x.max(), y.min(), y.max()), pad, span[0], units, text_scale)
    svg = _svg(fig)
    return svg, _map_alt(name, length, span, ends, len(checkpoints), len(climbs), units)


def _map_marks(
    ax: Any,
    at: Callable[[float], tuple[float, float]],
    length: float,
    climbs: Sequence[Any],
    checkpoints: Sequence[tuple[str, float]],
    k: float,
) -> tuple[tuple[float, float], tuple[float, float]]:
    """The map's marks along the route: arrows in the direction of travel, start
    (circle) and finish (square), climb numbers at their feet and checkpoints (Chk1,
    …), ``k`` times their normal size. Returns the start and the finish (x, y)."""
    for share in (1 / 6, 2 / 6, 3 / 6, 4 / 6, 5 / 6):  # direction of travel
        a, b = at(share * length), at(share * length + max(length / 200, 20.0))
        ax.annotate(
            "",
            xy=b,
            xytext=a,
            arrowprops={"arrowstyle": "-|>", "color": INK, "lw": 1.0, "mutation_scale": 12 * k},
        )
    from matplotlib.backends.backend_agg import RendererAgg

    fig = ax.figure
    width, height = fig.get_size_inches() * fig.dpi
    renderer = RendererAgg(width, height, fig.dpi)
    sx, sy = at(0.0)
    fx, fy = at(length)
    (start,) = ax.plot(
        [sx], [sy], marker="o", markersize=11 * k, color=INK, markerfacecolor="white", markeredgewidth=1.6
    )
    (finish,) = ax.plot([fx], [fy], marker="s", markersize=5 * k, color=INK)
    boxes = [start.get_window_extent(renderer), finish.get_window_extent(renderer)]
    for number, climb in enumerate(climbs, 1):
        cx, cy = at(climb.start_distance)
        mark = ax.annotate(
            str(number),
            (cx, cy),
            fontsize=SMALLEST_PT * k,
            fontweight="bold",
            color="white",
            ha="center",
            va="center",
            bbox={"boxstyle": "circle,pad=0.2", "facecolor": INK, "edgecolor": "none"},
        )
        boxes.append(_label_box(mark, renderer))
    places = [at(where) for _, where in checkpoints]
    triangles = []
    for cx, cy in places:
        (triangle,) = ax.plot(
            [cx], [cy], marker="^", markersize=7 * k, color=INK, markerfacecolor="white", markeredgewidth=1.2
        )
        triangles.append(triangle.get_window_extent(renderer))
    labels: list = []
    for number, (cx, cy) in enumerate(places, 1):  # each label where it covers no other mark
        others = boxes + labels + triangles[: number - 1] + triangles[number:]

        def label(offset, ha: str, va: str, number=number, xy=(cx, cy)):
            return ax.annotate(
                f"Chk{number}",
                xy,
                xytext=offset,
                textcoords="offset points",
                ha=ha,
                va=va,
                fontsize=SMALLEST_PT * k,
                color=INK,
                parse_math=False,
                bbox={"boxstyle": "square,pad=0.1", "facecolor": "white", "edgecolor": "none", "alpha": 0.8},
            )

        labels.append(_first_free(label, MAP_LABEL_SPOTS, others, renderer)[1])
    return (sx, sy), (fx, fy)


def _map_scale(
    ax: Any, box: tuple[float, float, float, float], pad: float, span_x: float, units: str, k: float
) -> None:
    """A scale bar of a round length (about a quarter of the route's width ``span_x``
    [m]) below the route's ``box`` (x min, x max, y min, y max [m]), and a north arrow
    above it; labels ``k`` times their normal size."""
    x_min, x_max, y_min, y_max = box
    unit = M_PER_MI if units == "imperial" else 1000.0
    target = 0.25 * span_x / unit
    nice = max(
        (v for v in (0.1, 0.2, 0.25, 0.5, 1, 2, 5, 10, 20, 25, 50, 100, 200) if v <= max(target, 0.1)),
        default=0.1,
    )
    bar = nice * unit
    x0, y0 = x_min - pad * 0.6, y_min - pad * 0.9
    ax.plot([x0, x0 + bar], [y0, y0], color=INK, linewidth=2.0, solid_capstyle="butt")
    label = f"{nice:g} {'mi' if units == 'imperial' else 'km'}"
    # the labels sit outside the route, offset in points (they keep clear of it at any
    # type size; the drawing's tight box takes them in): the scale's under its bar, N
    # above its arrow's tip
    ax.annotate(
        label,
        (x0 + bar / 2, y0),
        xytext=(0, -2),
        textcoords="offset points",
        fontsize=SMALLEST_PT * k,
        ha="center",
        va="top",
        color=INK,
    )
    nx, ny = x_max + pad * 0.6, y_max + pad * 0.2
    ax.annotate(
        "",
        xy=(nx, ny),
        xytext=(0, -1.4 * LABEL_PT * k),
        textcoords="offset points",
        arrowprops={"arrowstyle": "-|>", "color": INK, "lw": 1.2},
    )
    ax.annotate(
        "N",
        (nx, ny),
        xytext=(0, 1),
        textcoords="offset points",
        ha="center",
        va="bottom",
        fontsize=LABEL_PT * k,
        fontweight="bold",
        color=INK,
    )


def _map_alt(
    name: str,
    length: float,
    span: tuple[float, float],
    ends: tuple[tuple[float, float], tuple[float, float]],
    checkpoints: int,
    climbs: int,
    units: str,
) -> str:
    """The map's text for screen readers and print: its length and extent, a loop or
    where the finish lies from the start, and what the marks mean."""
    import math

    (sx, sy), (fx, fy) = ends
    span_x, span_y = span
    heading = math.degrees(math.atan2(fx - sx, fy - sy)) % 360
    closed = math.hypot(fx - sx, fy - sy) < 0.02 * max(span_x, span_y, 1.0)
    parts = [
        f"Map{' of ' + name if name else ''}: {fmt.distance(length, units)}, about "
        f"{fmt.distance(span_x, units)} east to west and {fmt.distance(span_y, units)} north to south; "
        + (
            "a loop that finishes where it starts."
            if closed
            else f"the finish lies to the {_compass(heading)} of the start."
        )
    ]
    if checkpoints:
        parts.append(f"{checkpoints} checkpoint{'s' if checkpoints != 1 else ''} marked Chk1 onwards.")
    if climbs:
        parts.append(f"Climbs numbered at their feet, 1 to {climbs}.")
    return " ".join(parts)


def _compass(degrees: float) -> str:
    names = ("north", "north-east", "east", "south-east", "south", "south-west", "west", "north-west")
    return names[int(((degrees % 360) + 22.5) // 45) % 8]
