"""Benchmark: a card's PDF time with the profile drawn as today (one compound path
per grade band, steepness shading) against the profile as it was drawn before (one
polygon per run of signed-grade bands), side by side in one run, on the demo's day
ride. Target (issue: cards fit to hand out): at most 0.65x. Not part of the test run.

    .venv/bin/python bench/bench_profile.py
"""

from __future__ import annotations

import shutil
import tempfile
import time
from pathlib import Path

import numpy as np

from cardgen.build import pipeline
from cardgen.config import load_config
from cardgen.render import format as fmt
from cardgen.render.pdf import pdf_bytes
from cardgen.render.plots import INK, _figure, _svg, thin

GRADE_RANGE = 12.0
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


# The profile as cardgen drew it before this change, kept here only for the comparison.
def old_elevation_profile(
    terrain,
    climbs,
    checkpoints=(),
    units: str = "metric",
    *,
    name: str = "",
    width_in: float = 6.6,
    height_in: float = 2.4,
    text_scale: float = 1.0,
):
    """Elevation against distance, filled by grade, climbs numbered, checkpoints marked.

    ``climbs`` are Climb objects (numbered in order), ``checkpoints`` (name, distance)
    pairs; ``text_scale`` enlarges every label (large print). Returns (svg, alt text).
    """
    k = text_scale
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.collections import PolyCollection
    from matplotlib.colors import BoundaryNorm

    imperial = units == "imperial"
    x_scale = 1 / fmt.M_PER_MI if imperial else 1 / 1000
    y_scale = 1 / fmt.M_PER_FT if imperial else 1.0
    d, e = thin(terrain.distance, terrain.elevation)
    x, y = d * x_scale, e * y_scale
    grade = np.diff(e) / np.maximum(np.diff(d), 1e-9) * 100
    bounds = np.arange(-GRADE_RANGE, GRADE_RANGE + 0.1, 2.0)
    cmap = colormaps["cividis"]
    norm = BoundaryNorm(bounds, cmap.N, extend="both")
    bins = np.digitize(grade, bounds)
    base = min(y.min(), 0.0) if y.min() < 0 else y.min() - 0.08 * max(np.ptp(y), 10)
    top = y.max() + 0.25 * max(np.ptp(y), 10)
    polys, colours = [], []
    start = 0
    for i in range(1, len(bins) + 1):  # one polygon for each run of the same colour band
        if i == len(bins) or bins[i] != bins[start]:
            xs, ys = x[start : i + 1], y[start : i + 1]
            polys.append(
                np.column_stack(
                    (np.concatenate((xs, xs[::-1])), np.concatenate((ys, np.full(xs.size, base))))
                )
            )
            colours.append(cmap(norm(float(np.mean(grade[start:i])))))
            start = i

    fig = _figure(width_in, height_in)
    ax = fig.add_subplot()
    # edges in the face colour hide the hairline seams between neighbouring polygons
    ax.add_collection(PolyCollection(polys, facecolors=colours, edgecolors=colours, linewidths=0.4))
    ax.plot(x, y, color=INK, linewidth=0.8)
    ax.set_xlim(x[0], x[-1])
    ax.set_ylim(base, top)
    ax.set_xlabel("distance (mi)" if imperial else "distance (km)", fontsize=8 * k, color=INK)
    ax.set_ylabel("elevation (ft)" if imperial else "elevation (m)", fontsize=8 * k, color=INK)
    ax.tick_params(labelsize=7 * k, colors=INK)
    for spine in ("top", "right"):
        ax.spines[spine].set_visible(False)
    for number, climb in enumerate(climbs, 1):
        cx = 0.5 * (climb.start_distance + climb.end_distance) * x_scale
        cy = climb.top * y_scale
        ax.annotate(
            str(number),
            (cx, cy),
            xytext=(0, 7),
            textcoords="offset points",
            ha="center",
            va="bottom",
            fontsize=8 * k,
            fontweight="bold",
            color="white",
            bbox={"boxstyle": "circle,pad=0.25", "facecolor": INK, "edgecolor": "none"},
        )
    for label, where in checkpoints:
        ax.axvline(where * x_scale, color=INK, linewidth=0.7, linestyle=(0, (3, 2)))
        ax.text(
            where * x_scale,
            top,
            label,
            rotation=90,
            fontsize=6 * k,
            ha="right",
            va="top",
            color=INK,
            parse_math=False,
        )
    bar = fig.colorbar(
        ScalarMappable(norm=norm, cmap=cmap), ax=ax, pad=0.01, fraction=0.04, ticks=bounds[::2]
    )
    bar.set_label("grade (%)", fontsize=7 * k, color=INK)
    bar.ax.tick_params(labelsize=6 * k, colors=INK)
    svg = _svg(fig)

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
            "Checkpoints: "
            + ", ".join(f"{label} at {fmt.distance(where, units)}" for label, where in checkpoints)
            + "."
        )
    parts.append("Colour shows the grade; the tables give the same numbers.")
    return svg, " ".join(parts)


def main() -> None:
    import dataclasses

    config = load_config(SAMPLES / "site.toml")
    config = dataclasses.replace(config, routes=tuple(r for r in config.routes if r.gpx.stem == "day-ride"))
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "site"
        pipeline.build_site(config, out, jobs=1, pdf=False)
        # the cards' sources, as the build made them
        captured = []
        real = pipeline._render_pdf
        pipeline._render_pdf = lambda card: captured.append(card) or card.target
        shutil.rmtree(out)
        pipeline.build_site(config, out, jobs=1, pdf=True)
        pipeline._render_pdf = real
        card = next(c for c in captured if c.variants)
        folder = Path(card.base)
        folder.mkdir(parents=True, exist_ok=True)
        from cardgen.io.gpx import read_gpx
        from cardgen.plan import analyse
        from cardgen.route.terrain import build_terrain

        track = read_gpx(config.routes[0].gpx)
        analysis = analyse(track, build_terrain(track))
        new_svg = (out / "day-ride" / "card-profile.svg").read_text(encoding="utf-8")
        old_svg, _ = old_elevation_profile(
            analysis.terrain, analysis.climbs, [], "metric", width_in=5.0, height_in=1.9
        )
        for name in ("card-profile-small.svg", "map.svg", "map-small.svg", "qr.svg"):
            if (out / "day-ride" / name).exists():
                shutil.copy(out / "day-ride" / name, folder / name)
        timings = {}
        empty = '<svg xmlns="http://www.w3.org/2000/svg" width="360pt" height="137pt"></svg>'
        for label, svg in (("before", old_svg), ("now", new_svg), ("empty (the floor)", empty)):
            (folder / "card-profile.svg").write_text(svg, encoding="utf-8")
            best = float("inf")
            for _ in range(3):
                t0 = time.perf_counter()
                pdf_bytes(card.variants[0], folder)  # one layout, the same HTML
                best = min(best, time.perf_counter() - t0)
            timings[label] = (best, svg.count("<path"), svg.count("<"))
    for label, (seconds, paths, nodes) in timings.items():
        print(f"profile {label}: {nodes} SVG elements ({paths} paths); card PDF {seconds:.2f} s")
    print(f"ratio now / before: {timings['now'][0] / timings['before'][0]:.2f}x (target <= 0.65x)")
    floor = timings["empty (the floor)"][0] / timings["before"][0]
    print(f"a card with no profile at all: {floor:.2f}x of before (no drawing of the profile can go lower)")


if __name__ == "__main__":
    main()
