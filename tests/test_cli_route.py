"""`cardgen route` on the sample routes, as a user runs it."""

import json
from pathlib import Path

import numpy as np
import pytest
from gpxmaker import profile_gpx, straight, to_latlon, write_gpx

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
CLIMB_KEYS = {
    "start_km",
    "end_km",
    "length_m",
    "gain_m",
    "avg_grade_pct",
    "max_grade_pct",
    "score",
    "band",
    "rider_difficulty",
    "power_for_target_w",
    "speed_at_effort_kmh",
    "time_s",
    "assist_level",
    "assist",
    "warnings",
}
DESCENT_KEYS = {
    "start_km",
    "end_km",
    "drop_m",
    "avg_grade_pct",
    "coast_speed_kmh",
    "gravity_power_w",
    "warnings",
}


@pytest.mark.parametrize("name", ["riverside-loop", "hill-loop", "day-ride", "accessible-path"])
def test_route_json_has_the_contract(cli, name):
    code, out, err = cli("route", str(SAMPLES / f"{name}.gpx"), "--json", parse_json=True)
    assert code == 0, err
    assert set(out) == {"route", "vehicle", "climbs", "descents", "totals", "notes"}
    assert all(set(n) >= {"code", "text", "at_km"} for n in out["notes"])
    assert set(out["route"]) == {"name", "distance_km", "gain_m", "loss_m", "points"}
    assert set(out["vehicle"]) == {"name", "mass_kg", "cda_m2", "crr"}
    assert set(out["totals"]) == {"time_s", "energy_kj", "food_kcal", "battery_wh"}
    for climb in out["climbs"]:
        assert set(climb) == CLIMB_KEYS
        assert climb["time_s"] > 0 and climb["power_for_target_w"] > 0
    for descent in out["descents"]:
        assert set(descent) == DESCENT_KEYS
        assert descent["gravity_power_w"] < 0  # gravity drives on a descent (docs/contracts.md sign)
    assert out["totals"]["time_s"] > 0


def test_hill_loop_numbers_are_plausible(cli):
    code, out, err = cli(
        "route",
        str(SAMPLES / "hill-loop.gpx"),
        "--vehicle",
        "road-hoods",
        "--power",
        "110",
        "--cp",
        "150",
        "--pacing",
        "steady",
        "--json",
        parse_json=True,
    )
    assert code == 0, err
    (climb,) = out["climbs"]
    assert 7 <= climb["avg_grade_pct"] <= 11 and climb["max_grade_pct"] >= 12
    # never above a CP of 150 W: on 14 % that is below 5.5 km/h (P·E = m·g·G·v, Martin et al. 1998)
    assert any(w["code"] == "walk" for w in climb["warnings"])
    (descent,) = out["descents"]
    assert any(w["code"] == "curve" for w in descent["warnings"])  # the hairpins
    # 26 km with one climb at a mean of 110 W: between 50 and 90 minutes
    assert 50 * 60 < out["totals"]["time_s"] < 90 * 60
    # On a loop the rider's work at the wheel pays for every loss, and rolling alone
    # costs Crr·m·g·cos θ per metre (Martin et al. 1998): a floor the work must clear.
    route, vehicle = out["route"], out["vehicle"]
    rolling_kj = vehicle["crr"] * vehicle["mass_kg"] * 9.80665 * route["distance_km"] * 1000 * 0.99 / 1000
    assert out["totals"]["energy_kj"] * 0.976 > rolling_kj
    # Food energy at a leg cyclist's gross efficiency of 19.8 ± 0.6 % (Moseley &
    # Jeukendrup 2001, MSSE 33:621): within the ±2 SD range of that published figure.
    efficiency = out["totals"]["energy_kj"] * 1000 / (out["totals"]["food_kcal"] * 4184)
    assert 0.186 <= efficiency <= 0.210


def test_handcycle_gets_no_walk_warning(cli):
    code, out, err = cli(
        "route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "handcycle", "--json", parse_json=True
    )
    assert code == 0, err
    assert not any(w["code"] == "walk" for c in out["climbs"] for w in c["warnings"])


def _east_west(tmp_path):
    x, y, _ = straight(5000, spacing=10, heading_deg=90.0)  # heading east
    lat, lon = to_latlon(x, y)
    return write_gpx(tmp_path / "east.gpx", lat, lon, np.zeros(x.size))


def test_wind_from_the_east_slows_an_eastbound_rider(cli, tmp_path):
    path = str(_east_west(tmp_path))
    calm = cli("route", path, "--json", parse_json=True)[1]["totals"]["time_s"]
    into = cli("route", path, "--wind", "20", "--wind-from", "90", "--json", parse_json=True)[1]
    behind = cli("route", path, "--wind", "20", "--wind-from", "270", "--json", parse_json=True)[1]
    assert into["totals"]["time_s"] > calm * 1.2
    assert behind["totals"]["time_s"] < calm * 0.9


def test_cold_air_is_slower(cli, tmp_path):
    path = str(_east_west(tmp_path))
    cold = cli("route", path, "--temperature", "-10", "--json", parse_json=True)[1]["totals"]["time_s"]
    warm = cli("route", path, "--temperature", "35", "--json", parse_json=True)[1]["totals"]["time_s"]
    assert cold > warm


def test_human_table(cli):
    code, out, err = cli("route", str(SAMPLES / "hill-loop.gpx"))
    assert code == 0, err
    assert "FIETS" in out and "Moving time" in out and "not guarantees" in out
    # the total is energy spent, as on the card, not what to eat
    assert "energy spent riding about" in out and "food about" not in out


def test_the_table_prints_the_figures_of_its_notes(cli):
    """One figure everywhere: a new user read "W@target 152 W" beside "the target speed
    takes 150 W", "max 13.6%" beside "steepest ... at 13.5 %" and "coasting 55 km/h"
    beside "coasting would reach 54.5 km/h" in one printout of a handcyclist."""
    import re

    code, out, err = cli("route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "handcycle")
    assert code == 0, err
    lines = out.splitlines()
    climb = next(line for line in lines if re.match(r"\s*1\s+\d", line) and "hard" in line)
    takes = re.search(r"the target speed takes (\d+ W)", out).group(1)
    steepest = re.search(r"steepest \d+ m at ([\d.]+ %)", out).group(1)
    assert f" {takes} " in climb and f" {steepest} " in climb
    descent = next(line for line in lines if re.match(r"\s*1\s+\d", line) and "from gravity" in line)
    coasting = re.search(r"coasting would reach ([\d.]+ km/h)", out)
    assert coasting is not None  # the handcycle's cap (35 km/h) is below its coasting speed here
    assert f" {coasting.group(1)} " in descent
    assert re.search(r"CP of (\d+) W", out).group(1) in out.splitlines()[1]  # the header's CP


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--power", "0"], "--power"),
        (["--power", "5000"], "--power"),
        (["--wind", "-3"], "--wind"),
        (["--wind-from", "400"], "--wind-from"),
        (["--temperature", "80"], "--temperature"),
        (["--target-speed", "0"], "--target-speed"),
        (["--vehicle", "rocket"], "unknown vehicle"),
    ],
)
def test_route_wrong_options(cli, args, fragment):
    code, _, err = cli("route", str(SAMPLES / "riverside-loop.gpx"), *args)
    assert code == 1
    assert fragment in err and "Traceback" not in err


def test_route_missing_file(cli, tmp_path):
    code, _, err = cli("route", str(tmp_path / "nope.gpx"))
    assert code == 1 and "no such file" in err


def test_route_json_warnings_are_objects_with_their_place(cli):
    code, out, err = cli(
        "route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "road-hoods", "--json", parse_json=True
    )
    assert code == 0, err
    (descent,) = out["descents"]
    curves = [w for w in descent["warnings"] if w["code"] == "curve"]
    assert curves and all(
        set(w) >= {"code", "severity", "text", "at_km", "radius_m", "slow_to_kmh"} for w in curves
    )
    for w in curves:  # v = √(a·R) at the vehicle's 0.2 g (FHWA-HRT-04-103, 2004)
        # the card's figures: the radius rounded down to its step, the speed down to 0.5 km/h
        step = 1.0 if w["radius_m"] < 30 else 5.0 if w["radius_m"] < 100 else 10.0
        low = (0.2 * 9.80665 * w["radius_m"]) ** 0.5 * 3.6
        high = (0.2 * 9.80665 * (w["radius_m"] + step)) ** 0.5 * 3.6
        assert w["slow_to_kmh"] % 0.5 == 0 and low - 0.5 <= w["slow_to_kmh"] <= high
        assert f"slow to {w['slow_to_kmh']:.1f} km/h" in w["text"]
        assert "safe" not in json.dumps(w)
        assert descent["start_km"] <= w["at_km"] <= descent["end_km"] + 0.1


def test_assist_level_is_a_whole_number_as_in_solve(cli):
    """route --json and solve --json give assist_level the same type: the level's
    number (0 = off), null without a motor; the words are in "assist"."""
    code, out, err = cli(
        "route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "e-assist-city", "--json", parse_json=True
    )
    assert code == 0, err
    assert out["climbs"]
    for climb in out["climbs"]:
        assert isinstance(climb["assist_level"], int) and not isinstance(climb["assist_level"], bool)
        assert isinstance(climb["assist"], str)
    code, out, err = cli(
        "route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "road-hoods", "--json", parse_json=True
    )
    assert code == 0, err
    assert all(c["assist_level"] is None and c["assist"] is None for c in out["climbs"])
    code, solved, err = cli(
        "solve",
        "--vehicle",
        "e-assist-city",
        "--speed",
        "15",
        "--grade",
        "6",
        "--assist-level",
        "2",
        "--json",
        parse_json=True,
    )
    assert code == 0, err
    assert solved["assist_level"] == 2


def test_route_json_carries_the_route_notes(cli, tmp_path):
    """The notes the text output prints (here: two track segments 500 km apart) are
    in the JSON too, as objects with a code, the text and where."""
    a_lat, a_lon = to_latlon(np.arange(0.0, 1500.0, 10.0), np.zeros(150))
    b_lat, b_lon = to_latlon(np.arange(0.0, 1500.0, 10.0), np.full(150, 500_000.0))
    pts = "".join(
        "<trkseg>"
        + "".join(
            f'<trkpt lat="{a:.8f}" lon="{b:.8f}"><ele>10</ele></trkpt>' for a, b in zip(la, lo, strict=True)
        )
        + "</trkseg>"
        for la, lo in ((a_lat, a_lon), (b_lat, b_lon))
    )
    path = tmp_path / "gap.gpx"
    path.write_text(
        '<?xml version="1.0"?><gpx version="1.1" creator="t" xmlns="http://www.topografix.com/GPX/1/1">'
        f"<trk><name>Gap</name>{pts}</trk></gpx>"
    )
    code, out, err = cli("route", str(path), "--json", parse_json=True)
    assert code == 0, err
    notes = [n for n in out["notes"] if n["code"] == "track"]
    assert notes and all(set(n) >= {"code", "text", "at_km"} for n in notes)
    assert any("gap" in n["text"] for n in notes)
    code, text_out, _ = cli("route", str(path))
    assert all(f"note: {n['text']}" in text_out for n in out["notes"])


@pytest.mark.parametrize("cp", [130.0, 95.0, 65.0])
def test_assist_is_the_lowest_level_that_holds_the_target_within_cp(cli, tmp_path, cp):
    """A cargo bike on a uniform 4 % climb (1.5 km, still air): the level `route`
    picks is the lowest at which `solve` says the rider needs no more than CP for the
    10 km/h target (a check through the other command's balance: level 2 needs about
    112 W, level 3 about 74 W, level 4 about 55 W); the level below needs more."""
    d = np.arange(0.0, 2500.0, 10.0)
    e = 100.0 + 0.04 * np.clip(d - 500.0, 0.0, 1500.0)
    path = profile_gpx(tmp_path / "ramp.gpx", d, e)
    code, out, err = cli(
        "route", str(path), "--vehicle", "e-assist-cargo", "--cp", str(cp), "--power", str(cp),
        "--target-speed", "10", "--json", parse_json=True,
    )  # fmt: skip
    assert code == 0, err
    (climb,) = out["climbs"]
    level = climb["assist_level"]  # the number, as in solve --json
    need = []
    for n in range(5):
        code, solved, _ = cli(
            "solve", "--vehicle", "e-assist-cargo", "--speed", "10", "--grade", "4", "--altitude", "130",
            "--assist-level", str(n), "--json", parse_json=True,
        )  # fmt: skip
        need.append(solved["power_w"])
    assert need[level] <= cp * 1.02
    assert level == 0 or need[level - 1] > cp


def test_a_given_mean_power_is_paced_as_the_label_says(cli, tmp_path):
    """`--power` is the ride's mean (its help) and "Pacing: best" is printed: seen
    failing on the old code, the trace held 240 W at every node (the mean was also
    set as the climbing power, capping every climb at it), a constant-power ride under
    a "best" label. Now the trace's time-weighted mean is the 240 W asked (within 1 %)
    and the climb is ridden above it; its last time is the moving time printed."""
    trace = tmp_path / "trace.csv"
    code, out, err = cli(
        "route", str(SAMPLES / "hill-loop.gpx"), "--vehicle", "city-upright", "--power", "240",
        "--trace", str(trace), "--json", parse_json=True,
    )  # fmt: skip
    assert code == 0, err
    rows = np.genfromtxt(trace, delimiter=",", names=True)
    dt = np.diff(rows["time_s"])
    mean = float(np.sum(rows["rider_w"][:-1] * dt) / np.sum(dt))
    assert mean == pytest.approx(240.0, rel=0.01)
    assert rows["rider_w"].max() > 250.0
    assert rows["time_s"][-1] == pytest.approx(out["totals"]["time_s"], abs=0.5)
