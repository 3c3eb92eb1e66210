"""The organiser's day sheet, recomputed from plan.json: every checkpoint's, feed
point's and marshal point's riders, first and last arrival, quarter-hour counts,
window, stock and last departure are the plans' own numbers."""

from __future__ import annotations

import csv
import json
import shutil
from datetime import datetime, timedelta
from pathlib import Path

import pytest
from buildkit import pdf_text

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
feeds = [55, 88]
marshals = [12.5, "Checkpoint 3: Yarrowvane Top"]
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


def _points(plan: dict) -> list[dict]:
    """Every point of the route in the sheet's order (by distance, a checkpoint before
    another point at the same place), each with its kind, planned stop and the riders'
    arrivals (datetimes; None where a rider does not arrive)."""
    out = [
        {
            "name": point["name"],
            "kind": "checkpoint",
            "distance_m": point["distance_m"],
            "window": (point["opens"], point["closes"]),
            "stop_s": plan["plans"][0]["checkpoints"][k]["stop_s"],
            "arrivals": [p["checkpoints"][k]["arrival"] for p in plan["plans"]],
        }
        for k, point in enumerate(plan["checkpoints"])
    ] + [
        {
            "name": pt["name"],
            "kind": pt["kind"],
            "distance_m": pt["distance_m"],
            "window": None,
            "stop_s": 0,
            "arrivals": [p["points"][j]["arrival"] for p in plan["plans"]],
        }
        for j, pt in enumerate(plan["points"])
    ]
    out.sort(key=lambda x: (x["distance_m"], x["kind"] != "checkpoint"))
    for x in out:
        x["arrivals"] = [_t(a) if a else None for a in x["arrivals"]]
    return out


#: The top of the carbohydrate guide [g/h] by the whole ride's hours: Thomas, Erdman &
#: Burke 2016, "Nutrition and Athletic Performance", Med Sci Sports Exerc 48(3), Table 4
#: [S]: 1–2.5 h 30–60 g/h, longer up to 90 g/h; 45–75 min small amounts (cardgen: up to
#: 30 g/h), under about 45 min none.
CARBS_TOP = ((0.75, 0.0), (1.25, 30.0), (2.5, 60.0), (float("inf"), 90.0))
#: The top of the fluid guide at 22 °C [L/h]: Sawka et al. 2007's 0.4–0.8 L/h split by
#: temperature, 0.5–0.7 L/h from 15 to 25 °C (common practice, no published source).
FLUID_TOP_22C = 0.7
#: People on a vehicle: a tandem carries two (what the word means), the others one;
#: the guides above are per person, so a feed stocks the tandem's leg twice.
PEOPLE = {"tandem": 2}


def _stock(plan: dict, points: list[dict], k: int) -> tuple[float, float]:
    """Carbohydrate [g] and fluid [L] to stock at ``points[k]``, worked out from the
    arrivals alone: each rider due there rides from there to the next place with food
    (a feed point or a checkpoint with a stop) or the finish; the riding time of that
    leg is the arrival there less the arrival here and the stop here; once per person
    on the rider's vehicle."""
    here = points[k]
    later = [x for x in points[k + 1 :] if x["distance_m"] > here["distance_m"]]
    after = next((x for x in later if x["kind"] == "feed" or x["stop_s"] > 0), None)
    carbs = fluid = 0.0
    for i, p in enumerate(plan["plans"]):
        arrive = here["arrivals"][i]
        if arrive is None:
            continue
        end = after["arrivals"][i] if after else _t(p["finish"])
        hours = ((end - arrive).total_seconds() - here["stop_s"]) / 3600
        stopped = sum(c["stop_s"] for c in p["checkpoints"])
        ride_h = ((_t(p["finish"]) - _t(p["rider"]["start"])).total_seconds() - stopped) / 3600
        people = PEOPLE.get(p["rider"]["vehicle"], 1)
        carbs += next(top for limit, top in CARBS_TOP if ride_h <= limit) * hours * people
        fluid += FLUID_TOP_22C * hours * people
    return carbs * (1 + STOCK_MARGIN), fluid * (1 + STOCK_MARGIN)


def test_every_number_of_the_day_sheet_comes_from_the_plans(site):
    plan = json.loads((site / "day-ride" / "plan.json").read_text())
    rows = list(csv.DictReader((site / "day-sheet.csv").read_text(encoding="utf-8").splitlines()))
    points = _points(plan)
    assert [(r["checkpoint"], r["kind"]) for r in rows] == [(x["name"], x["kind"]) for x in points]
    assert [r["kind"] for r in rows].count("feed") == 2 and [r["kind"] for r in rows].count("marshal") == 2
    starts = [_t(p["rider"]["start"]) for p in plan["plans"]]
    for k, (row, x) in enumerate(zip(rows, points, strict=True)):
        arrivals = [a for a in x["arrivals"] if a is not None]
        assert int(row["riders"]) == len(arrivals) == len(plan["plans"])
        assert int(row["people"]) == sum(PEOPLE.get(p["rider"]["vehicle"], 1) for p in plan["plans"])
        assert float(row["km"]) == pytest.approx(x["distance_m"] / 1000, abs=0.005)
        # the clock is printed to the minute (starts are half a minute apart: to the second)
        assert _t(row["first"]) == min(arrivals).replace(microsecond=0)
        assert _t(row["last"]) == max(arrivals).replace(microsecond=0)
        if x["window"]:
            assert (row["opens"], row["closes"]) == x["window"]
        stop = x["stop_s"]
        assert _t(row["opens"]) <= min(arrivals) and max(arrivals) + timedelta(seconds=stop) <= _t(
            row["closes"]
        )
        quarters = [part.split("=") for part in row["per_15_min"].split("; ")]
        assert sum(int(n) for _, n in quarters) == len(arrivals)
        for q, n in quarters:
            begin = _t(q)
            assert int(n) == sum(begin <= a < begin + timedelta(minutes=15) for a in arrivals)
        assert int(row["stop_min"]) == round(stop / 60)
        if x["kind"] == "marshal":  # a marshal point stocks nothing
            assert row["carbs_g"] == row["fluid_l"] == ""
        elif x["kind"] == "feed" or stop:  # food here: the next leg of everyone due, plus the margin
            carbs, fluid = _stock(plan, points, k)
            # rounded up to the gram and the tenth of a litre (plan.json's figures carry
            # their own rounding, a few hundredths)
            assert carbs - 0.05 <= float(row["carbs_g"]) < carbs + 1.05
            assert fluid - 0.005 <= float(row["fluid_l"]) < fluid + 0.105
            assert float(row["carbs_g"]) > 0 and float(row["fluid_l"]) > 0
        else:
            assert float(row["carbs_g"]) == 0
        leaves = max(arrivals) + timedelta(seconds=stop)
        assert _t(row["last_leaves"]) == leaves.replace(microsecond=0)
        pace = max(starts) + timedelta(seconds=SWEEP_DELAY + x["distance_m"] / SWEEP_SPEED)
        # printed to the nearest second, half up, like every clock time
        assert _t(row["sweep"]) == (max(pace, leaves) + timedelta(microseconds=500_000)).replace(
            microsecond=0
        )


def test_the_index_links_the_day_sheet(demo_site):
    """An organiser found the day sheet only by its file name: the index links it."""
    _, out, _ = demo_site
    index = (out / "index.html").read_text()
    for name in ("day-sheet.pdf", "day-sheet.csv"):
        assert f'href="{name}"' in index and (out / name).is_file()


def test_the_sheet_says_who_stays_for_a_sweep_after_closing(demo_site):
    """A trial read Chk4 "closes 12:10" beside "sweep 12:44" as a point left empty
    before the sweep arrives: the sheet says the window is the riders' and the staff
    stay for the sweep, and on the demo that case does occur."""
    _, out, _ = demo_site
    rows = list(csv.DictReader((out / "day-sheet.csv").read_text(encoding="utf-8").splitlines()))
    assert any(_t(r["sweep"]) > _t(r["closes"]) for r in rows)
    assert "the point's staff stay until it has passed" in pdf_text(out / "day-sheet.pdf").replace("’", "'")
