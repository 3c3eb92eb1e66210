"""`cardgen solve` and `cardgen vehicles` as a user runs them."""

from pathlib import Path

import pytest

KEYS = {"speed_kmh", "power_w", "grade_pct", "headwind_kmh", "air_density_kg_m3", "breakdown_w"}


def test_solve_power_for_speed_json(cli):
    code, out, err = cli(
        "solve",
        "--speed",
        "30",
        "--mass",
        "100",
        "--crr",
        "0.008",
        "--cda",
        "0.63",
        "--air-density",
        "1.2",
        "--json",
        parse_json=True,
    )
    assert code == 0, err
    assert set(out) == KEYS
    assert set(out["breakdown_w"]) == {"rolling", "aero", "gravity", "drivetrain"}
    # common practice, no published source: ≈285 W at 30 km/h (see test_steady)
    assert out["power_w"] == pytest.approx(285, rel=0.10)
    assert out["breakdown_w"]["drivetrain"] == 0.0  # explicit coefficients: efficiency 1.0
    assert sum(out["breakdown_w"].values()) == pytest.approx(out["power_w"], rel=1e-9)


def test_solve_speed_for_power_with_vehicle(cli):
    code, out, err = cli(
        "solve", "--power", "200", "--grade", "5", "--vehicle", "road-hoods", "--json", parse_json=True
    )
    assert code == 0, err
    assert 10 < out["speed_kmh"] < 20
    assert out["power_w"] == 200
    assert out["breakdown_w"]["drivetrain"] > 0
    assert sum(out["breakdown_w"].values()) == pytest.approx(200, rel=1e-6)


def test_descent_gravity_is_negative(cli):
    code, out, err = cli(
        "solve", "--power", "0", "--grade", "-8", "--vehicle", "city-upright", "--json", parse_json=True
    )
    assert code == 0, err
    assert out["breakdown_w"]["gravity"] < 0
    assert out["speed_kmh"] > 30


def test_altitude_lowers_air_density(cli):
    code, out, _ = cli(
        "solve", "--speed", "30", "--vehicle", "road-hoods", "--altitude", "2000", "--json", parse_json=True
    )
    assert code == 0
    assert out["air_density_kg_m3"] == pytest.approx(1.0066, abs=5e-4)  # ISO 2533


def test_human_output_is_a_table(cli):
    code, out, err = cli("solve", "--speed", "20", "--vehicle", "handcycle")
    assert code == 0, err
    for word in ("km/h", "rolling", "aero", "gravity", "drivetrain", "%"):
        assert word in out


@pytest.mark.parametrize(
    "args, code, fragment",
    [
        (["--power", "100", "--mass", "-80", "--crr", "0.005", "--cda", "0.4"], 1, "--mass"),
        (["--power", "100", "--grade", "200", "--vehicle", "road-hoods"], 1, "--grade"),
        (["--power", "100", "--vehicle", "unicycle"], 1, "unknown vehicle"),
        (["--power", "100"], 1, "--vehicle"),
        (["--power", "100", "--speed", "20", "--vehicle", "road-hoods"], 2, "not allowed"),
        (["--vehicle", "road-hoods"], 2, "required"),
        (["--power", "nan", "--vehicle", "road-hoods"], 1, "finite"),
        (["--speed", "20", "--vehicle", "road-hoods", "--mass", "80"], 1, "not both"),
        (["--power", "abc"], 2, "invalid float"),
    ],
)
def test_wrong_input_is_one_clear_line(cli, args, code, fragment):
    got, _, err = cli("solve", *args)
    assert got == code
    assert fragment in err
    assert "Traceback" not in err


def test_vehicles_lists_the_library(cli):
    code, out, _ = cli("vehicles")
    assert code == 0
    assert "handcycle" in out and "e-assist-cargo" in out
    code, rows, _ = cli("vehicles", "--json", parse_json=True)
    assert code == 0
    assert all(row["sources"]["cda_m2"] for row in rows)


def test_python_dash_m_works():
    import subprocess
    import sys

    proc = subprocess.run([sys.executable, "-m", "cardgen", "--version"], capture_output=True, text=True)
    assert proc.returncode == 0
    assert proc.stdout.startswith("cardgen ")


@pytest.mark.parametrize(
    "args",
    [
        ["--power", "0", "--grade", "40"],
        ["--power", "0", "--grade", "-40"],
        ["--power", "2000", "--grade", "-40"],
        ["--power", "2000", "--headwind", "150"],
        ["--power", "50", "--headwind", "-150"],
        ["--power", "300", "--altitude", "-400"],
        ["--power", "300", "--altitude", "5000"],
        ["--speed", "0", "--grade", "40"],
        ["--speed", "150", "--grade", "-40", "--headwind", "150"],
    ],
)
@pytest.mark.parametrize("mass", ["20", "500"])
def test_guard_rails_give_finite_numbers(args, mass):
    import contextlib
    import io
    import json
    import math

    from cardgen.cli import main

    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = main(["solve", *args, "--mass", mass, "--crr", "0.006", "--cda", "0.5", "--json"])
    assert code == 0
    data = json.loads(out.getvalue())
    numbers = [data["speed_kmh"], data["power_w"], *data["breakdown_w"].values()]
    assert all(math.isfinite(x) for x in numbers)
    assert data["speed_kmh"] >= 0


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--power", "100", "--headwind", "151"], "--headwind"),
        (["--power", "100", "--grade", "51"], "--grade"),
        (["--power", "3001"], "--power"),
        (["--speed", "151"], "--speed"),
        (["--speed", "-1"], "--speed"),
        (["--power", "100", "--altitude", "9001"], "--altitude"),
        (["--power", "100", "--air-density", "3"], "--air-density"),
        (["--power", "100", "--efficiency", "0.2"], "--efficiency"),
    ],
)
def test_guard_rails_refusals(cli, args, fragment):
    code, _, err = cli("solve", *args, "--mass", "80", "--crr", "0.005", "--cda", "0.4")
    assert code == 1 and fragment in err and "Traceback" not in err


@pytest.mark.parametrize("mass", ["19", "601"])
def test_guard_rails_mass(cli, mass):
    code, _, err = cli("solve", "--power", "100", "--mass", mass, "--crr", "0.005", "--cda", "0.4")
    assert code == 1 and "--mass" in err


def test_assist_level_in_solve(cli):
    code, out, err = cli(
        "solve",
        "--vehicle",
        "e-assist-city",
        "--speed",
        "20",
        "--grade",
        "5",
        "--assist-level",
        "2",
        "--json",
        parse_json=True,
    )
    assert code == 0, err
    # level 2 of the EU pedelec envelope is a 100 % assist ratio, below the 25 km/h
    # cut-off (Regulation (EU) No 168/2013): the wheel gets P·E + 1.0·P
    need = out["breakdown_w"]["rolling"] + out["breakdown_w"]["aero"] + out["breakdown_w"]["gravity"]
    assert out["power_w"] * (0.95 + 1.0) == pytest.approx(need, rel=1e-9)
    assert out["motor_w"] == pytest.approx(out["power_w"]) and out["assist_level"] == 2


def test_solve_says_the_motor_is_off_without_a_level(cli):
    code, out, err = cli("solve", "--vehicle", "e-assist-city", "--power", "100")
    assert code == 0 and "motor is off" in out


def test_assist_level_without_a_motor_is_refused(cli):
    code, _, err = cli("solve", "--vehicle", "road-hoods", "--power", "100", "--assist-level", "1")
    assert code == 1 and "needs a --vehicle with a motor" in err


def test_solve_and_route_print_short_cautions(cli):
    """A speed from the power balance is an upper bound, not an allowance: the text
    output of solve (here 0 W down 12 %) and route says so."""
    code, out, _ = cli("solve", "--vehicle", "road-hoods", "--power", "0", "--grade", "-12")
    assert code == 0 and "not a safe or target speed" in out
    sample = Path(__file__).resolve().parents[1] / "sample_routes" / "hill-loop.gpx"
    code, out, _ = cli("route", str(sample))
    assert code == 0 and "not safe or target speeds" in out and "medical clearance" in out
