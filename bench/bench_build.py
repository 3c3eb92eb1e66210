"""Benchmark: full builds of the demo and of a synthetic site of 20 routes × 5 riders
with --jobs 1 and --jobs 2 (speed-up; target ≥ 1.7× on 2 cores), the share of the
build spent rendering PDFs (target ≥ 75 %), the time per card (HTML + PDF; PDF share
of it, target ≥ 80 %), and a no-change rebuild as a share of the full build (target
≤ 5 %). All in one run. Not part of the test run.

    .venv/bin/python bench/bench_build.py
"""

from __future__ import annotations

import shutil
import tempfile
import time
from importlib import resources
from pathlib import Path

from cardgen.build import build_site
from cardgen.config import load_config

SAMPLES = Path(str(resources.files("cardgen.sample_routes")))


def synthetic_site(folder: Path) -> Path:
    """20 routes (the four demo routes, five renamed copies of each) and five riders."""
    folder.mkdir(parents=True)
    routes = []
    for copy in range(5):
        for gpx in sorted(SAMPLES.glob("*.gpx")):
            name = f"{gpx.stem}-{copy}.gpx"
            text = gpx.read_text(encoding="utf-8").replace("<name>", f"<name>Copy {copy} of ", 2)
            (folder / name).write_text(text, encoding="utf-8")
            routes.append(name)
    demo = (SAMPLES / "site.toml").read_text(encoding="utf-8")
    riders = demo[demo.index("[[riders]]") :].replace(
        'routes = ["riverside-loop", "hill-loop", "accessible-path"]\n', ""
    )
    riders = riders.replace('routes = ["riverside-loop", "accessible-path", "hill-loop"]\n', "")
    # the demo's spreadsheet riders name the demo's routes: not these copies
    riders = riders.split("# More entrants")[0]
    body = '[site]\ntitle = "Synthetic"\n[event]\nstart = "08:00"\n'
    body += "".join(f'[[routes]]\ngpx = "{r}"\n' for r in routes) + riders
    (folder / "site.toml").write_text(body, encoding="utf-8")
    return folder / "site.toml"


def timed_build(config_path: Path, out: Path, jobs: int):
    shutil.rmtree(out, ignore_errors=True)
    t0 = time.perf_counter()
    report = build_site(load_config(config_path), out, jobs=jobs)
    return time.perf_counter() - t0, report


def card_costs(config_path: Path, work: Path):
    """Time to make one card's HTML and to render its PDF, on the demo's hill loop."""
    from cardgen.io.gpx import read_gpx
    from cardgen.plan import analyse, make_plan
    from cardgen.render.html import RiderView, environment, symbols_for
    from cardgen.render.pages import page_geometry
    from cardgen.render.pdf import pdf_bytes
    from cardgen.render.plots import elevation_profile
    from cardgen.route.checkpoints import resolve_checkpoints
    from cardgen.route.terrain import build_terrain

    config = load_config(config_path)
    route = next(r for r in config.routes if r.gpx.stem == "hill-loop")
    track = read_gpx(route.gpx)
    analysis = analyse(track, build_terrain(track))
    rider = config.riders[0].rider
    plan = make_plan(analysis, rider=rider, conditions=config.conditions)
    checkpoints = resolve_checkpoints(route.checkpoints, track, analysis.terrain, str(route.gpx))
    env = environment(None, config.units)
    work.mkdir(parents=True, exist_ok=True)
    n = 5
    t0 = time.perf_counter()
    for _ in range(n):
        svg, alt = elevation_profile(
            analysis.terrain, analysis.climbs, [(c.name, c.distance) for c in checkpoints]
        )
    t_plot = (time.perf_counter() - t0) / n
    (work / "profile.svg").write_text(svg)
    t0 = time.perf_counter()
    for _ in range(n):
        html = env.get_template("card.html").render(
            site={},
            route={"name": track.name, "distance": analysis.terrain.length, "gain": analysis.terrain.gain},
            units="metric",
            version="",
            symbols_for=symbols_for,
            rider=RiderView(rider.name, "r", plan, "r.pdf", None),
            plan=plan,
            start=None,
            profile_alt=alt,
            profile="profile.svg",
            page=page_geometry(config.card_size, config.large_print),
            qr="",
        )
    t_html = (time.perf_counter() - t0) / n
    t0 = time.perf_counter()
    for _ in range(n):
        (work / "card.pdf").write_bytes(pdf_bytes(html, work)[0])
    t_pdf = (time.perf_counter() - t0) / n
    return t_plot, t_html, t_pdf


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        t_plot, t_html, t_pdf = card_costs(SAMPLES / "site.toml", tmp / "card")
        print(
            f"one card: HTML {t_html * 1000:.0f} ms, PDF {t_pdf * 1000:.0f} ms; PDF share "
            f"{t_pdf / (t_html + t_pdf):.0%} (target >= 80%). The route's profile plot, shared by "
            f"all its cards and its page: {t_plot * 1000:.0f} ms; with it counted on one card the share "
            f"would be {t_pdf / (t_plot + t_html + t_pdf):.0%}"
        )
        for label, config_path in (
            ("demo", SAMPLES / "site.toml"),
            ("20 routes x 5 riders", synthetic_site(tmp / "synthetic")),
        ):
            out = tmp / "out"
            one, report = timed_build(config_path, out, 1)
            two, _ = timed_build(config_path, out, 2)
            t0 = time.perf_counter()
            again = build_site(load_config(config_path), out, jobs=2)
            rebuild = time.perf_counter() - t0
            assert again.up_to_date
            share = report.seconds["pdf"] / one
            print(
                f"{label}: {report.cards_rendered} cards; --jobs 1 {one:.1f} s, --jobs 2 {two:.1f} s, "
                f"speed-up {one / two:.2f}x (target >= 1.7x); PDF share of the --jobs 1 build {share:.0%} "
                f"(target >= 75%); no-change rebuild {rebuild:.2f} s = {rebuild / two:.1%} of the --jobs 2 "
                f"build (target <= 5%)"
            )


if __name__ == "__main__":
    main()
