"""The organiser's day sheet, recomputed from plan.json: every checkpoint's riders,
first and last arrival, quarter-hour counts, window, feed stock and last departure
are the plans' own numbers."""

from __future__ import annotations

import csv
import json
import shutil
from datetime import datetime, timedelta
from pathlib import Path

import pytest

from cardgen.build import build_site
from cardgen.config import load_config
from cardgen.plan.day import STOCK_MARGIN, SWEEP_DELAY, SWEEP_SPEED

pytestmark = pytest.mark.slow
SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
SITE = """
[event]
start = "07:00"
start_interval_min = 0.5
[conditions]
temperature_c = 22
[[waves]]
name = "First"
start = "06:45"
interval_min = 1
riders = ["H1", "H2"]
[[routes]]
gpx = "day-ride.gpx"
stops_min = [10, 30, 0, 10]
""" + "".join(
    f'[[riders]]\nname = "{n}"\nvehicle = "{v}"\n'
    for n, v in [
        ("H1", "handcycle"),
        ("H2", "trike-recumbent"),
        ("R1", "road-hoods"),
        ("R2", "city-upright"),
        ("T", "tandem"),
    ]
)


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    folder = tmp_path_factory.mktemp("day")
    shutil.copy(SAMPLES / "day-ride.gpx", folder)
    (folder / "site.toml").write_text(SITE, encoding="utf-8")
    build_site(load_config(folder / "site.toml"), folder / "site", jobs=1, pdf=False)
    return folder / "site"


def _t(text: str) -> datetime:
    return datetime.strptime(text, "%H:%M:%S" if text.count(":") == 2 else "%H:%M")


def test_every_number_of_the_day_sheet_comes_from_the_plans(site):
    plan = json.loads((site / "day-ride" / "plan.json").read_text())
    rows = list(csv.DictReader((site / "day-sheet.csv").read_text(encoding="utf-8").splitlines()))
    assert [r["checkpoint"] for r in rows] == [c["name"] for c in plan["checkpoints"]]
    starts = [_t(p["rider"]["start"]) for p in plan["plans"]]
    for k, (row, cp) in enumerate(zip(rows, plan["checkpoints"], strict=True)):
        arrivals = [
            _t(p["checkpoints"][k]["arrival"]) for p in plan["plans"] if p["checkpoints"][k]["arrival"]
        ]
        assert int(row["riders"]) == len(arrivals) == len(plan["plans"])
        # the clock is printed to the minute (starts are half a minute apart: to the second)
        assert _t(row["first"]) == min(arrivals).replace(microsecond=0)
        assert _t(row["last"]) == max(arrivals).replace(microsecond=0)
        assert (row["opens"], row["closes"]) == (cp["opens"], cp["closes"])
        assert _t(row["opens"]) <= min(arrivals) and max(arrivals) + timedelta(
            seconds=plan["plans"][0]["checkpoints"][k]["stop_s"]
        ) <= _t(row["closes"])
        quarters = [part.split("=") for part in row["per_15_min"].split("; ")]
        assert sum(int(n) for _, n in quarters) == len(arrivals)
        for q, n in quarters:
            begin = _t(q)
            assert int(n) == sum(begin <= a < begin + timedelta(minutes=15) for a in arrivals)
        stop = plan["plans"][0]["checkpoints"][k]["stop_s"]
        assert int(row["stop_min"]) == round(stop / 60)
        if stop:  # a feed stop: the next leg of everyone due, at the top of each guide, plus the margin
            carbs = sum(p["legs"][k + 1]["carbs_g"][1] for p in plan["plans"]) * (1 + STOCK_MARGIN)
            fluid = sum(p["legs"][k + 1]["fluid_l"][1] for p in plan["plans"]) * (1 + STOCK_MARGIN)
            assert float(row["carbs_g"]) == pytest.approx(carbs, abs=1.0)
            assert float(row["fluid_l"]) == pytest.approx(fluid, abs=0.06)
            assert float(row["carbs_g"]) > 0 and float(row["fluid_l"]) > 0
        else:
            assert float(row["carbs_g"]) == 0
        leaves = max(arrivals) + timedelta(seconds=stop)
        assert _t(row["last_leaves"]) == leaves.replace(microsecond=0)
        pace = max(starts) + timedelta(seconds=SWEEP_DELAY + cp["distance_m"] / SWEEP_SPEED)
        assert _t(row["sweep"]) == max(pace, leaves).replace(microsecond=0)
