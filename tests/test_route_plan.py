"""``cardgen route`` and ``cardgen build`` plan a route through one function
(``plan.plan_route``): for the same GPX, vehicle and conditions they print the same
numbers."""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

import pytest

from cardgen.build import build_site
from cardgen.cli import main
from cardgen.config import gpx_config

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


@pytest.fixture(scope="module")
def built_hill_loop(tmp_path_factory):
    """The hill loop built as a one-route site with the default riders (no cards)."""
    config = gpx_config(SAMPLES / "hill-loop.gpx")
    out = tmp_path_factory.mktemp("one") / "site"
    build_site(config, out, pdf=False)
    (plan_json,) = out.glob("*/plan.json")
    return json.loads(plan_json.read_text(encoding="utf-8"))


def _route_json(*args: str) -> dict:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["route", str(SAMPLES / "hill-loop.gpx"), *args, "--json"]) == 0
    return json.loads(out.getvalue())


@pytest.mark.parametrize("vehicle", ["city-upright", "road-hoods", "e-assist-city", "handcycle"])
def test_the_route_command_prints_the_builds_plan(built_hill_loop, vehicle):
    (built,) = [p for p in built_hill_loop["plans"] if p["rider"]["vehicle"] == vehicle]
    printed = _route_json("--vehicle", vehicle)
    assert len(printed["climbs"]) == len(built["climbs"]) > 0
    for c, b in zip(printed["climbs"], built["climbs"], strict=True):
        assert c["assist"] == b["assist"]  # the level chosen for the same climb
        assert c["power_for_target_w"] == pytest.approx(b["power_for_target_w"], abs=0.06)
        assert c["speed_at_effort_kmh"] / 3.6 == pytest.approx(b["speed_m_s"], abs=6e-4)
        assert c["time_s"] == pytest.approx(b["time_s"], abs=0.06)
        assert [w["code"] for w in c["warnings"]] == [w["code"] for w in b["warnings"]]
    for d, b in zip(printed["descents"], built["descents"], strict=True):
        assert [w["code"] for w in d["warnings"]] == [w["code"] for w in b["warnings"]]
    assert printed["totals"]["time_s"] == pytest.approx(built["totals"]["time_s"], abs=0.06)
    assert printed["totals"]["energy_kj"] * 1000 == pytest.approx(built["totals"]["energy_j"], abs=0.6)
