"""One rule for a rider's CP and W′, whether the flat effort is given in watts or as
a speed; and the rider's own share of that speed on an e-assist bike."""

from __future__ import annotations

import contextlib
import io
import json
import shutil
from pathlib import Path

import pytest
from scipy.optimize import brentq

from cardgen.cli import main
from cardgen.config import load_config
from cardgen.errors import ConfigError
from cardgen.profiles.motors import find_motor
from cardgen.profiles.vehicles import builtin_vehicles

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"
G0 = 9.80665  # standard gravity [m/s²], exact by definition (CGPM 1901)
RHO0 = 1.225  # ISA sea-level air density [kg/m³], ISO 2533


def _rider(tmp_path: Path, vehicle: str, keys: str):
    shutil.copy(SAMPLES / "riverside-loop.gpx", tmp_path)
    text = f'[[routes]]\ngpx = "riverside-loop.gpx"\n[[riders]]\nname = "A"\nvehicle = "{vehicle}"\n{keys}'
    (tmp_path / "site.toml").write_text(text, encoding="utf-8")
    return load_config(tmp_path / "site.toml").riders[0].rider


def _wheel_power_needed(v: float, vehicle) -> float:
    """Steady power at the wheel on level ground in still air [W], the terms of
    Martin et al. (1998), J. Appl. Biomech. 14:276–291 written out: rolling
    v·Crr·m·g, wheel bearings v·(91 + 8.7·v)·10⁻³ (Dahn et al. 1991) and air
    ½·ρ·CdA·v³."""
    return v * vehicle.crr * vehicle.mass * G0 + v * (91 + 8.7 * v) * 1e-3 + 0.5 * RHO0 * vehicle.cda * v**3


def test_speed_and_watts_to_the_same_flat_effort_give_the_same_cp_and_w_prime(tmp_path):
    by_speed = _rider(tmp_path, "handcycle", "flat_kmh = 12\n")
    by_watts = _rider(tmp_path, "handcycle", f"flat_w = {by_speed.flat_power!r}\n")
    assert by_watts.flat_power == by_speed.flat_power
    assert by_watts.cp == pytest.approx(by_speed.cp, rel=1e-12)
    assert by_watts.w_prime == pytest.approx(by_speed.w_prime, rel=1e-12)
    assert by_watts.climb_power_used == pytest.approx(by_speed.climb_power_used, rel=1e-12)
    # the flat effort is 70 % of CP, the default W′ 70 s of CP: common practice, no
    # published source
    assert by_speed.cp == pytest.approx(by_speed.flat_power / 0.70)
    assert by_speed.w_prime == pytest.approx(70.0 * by_speed.cp)
    # a handcyclist slower on the flat (12 km/h) than the arm-impairment group's 10 km
    # race (13.6 km/h, POmax 55 ± 25 W; Janssen, Dallmeijer & van der Woude 2001, J.
    # Rehabil. Res. Dev. 38:33–40 [V]) gets a CP inside that group's span
    assert 55 - 25 <= by_speed.cp <= 55 + 25


def test_the_flat_power_for_a_speed_is_the_power_balance(tmp_path):
    rider = _rider(tmp_path, "handcycle", "flat_kmh = 12\n")
    v = rider.vehicle
    expected = _wheel_power_needed(12 / 3.6, v) / v.efficiency  # Martin et al. (1998)
    assert rider.flat_power == pytest.approx(expected, rel=1e-6)


@pytest.mark.parametrize("level", [0, 1, 2, 3, 4])
@pytest.mark.parametrize("kmh", [20.0, 24.0])
def test_an_e_assist_rider_by_speed_rides_with_the_motor_at_their_level(tmp_path, level, kmh):
    rider = _rider(tmp_path, "e-assist-city", f"flat_kmh = {kmh}\nassist_between_climbs = {level}\n")
    vehicle = rider.vehicle
    motor = find_motor(vehicle.motor)
    ratio = 0.0 if level == 0 else motor.levels[level - 1]
    v = kmh / 3.6
    # assistance tapers linearly to zero at the cut-off (Regulation (EU) No 168/2013,
    # Art. 2(2)(h): "progressively reduced and finally cut off"); all day on the flat
    # the motor gives at most its continuous rating
    taper = min(1.0, max(0.0, (motor.cutoff_speed - v) / motor.taper))
    need = _wheel_power_needed(v, vehicle)

    def surplus(p):
        return p * vehicle.efficiency + min(ratio * p, motor.rated_power) * taper - need

    expected = brentq(surplus, 0.0, 2000.0, xtol=1e-9)
    assert rider.flat_power == pytest.approx(expected, rel=1e-6)


def test_an_e_assist_entrant_with_a_modest_cp_is_not_refused(tmp_path):
    # 20 km/h on the flat takes a rider alone about 105 W; at assist level 1 (50 %) the
    # rider gives two thirds of the wheel power: well under a CP of 102 W
    rider = _rider(tmp_path, "e-assist-city", "flat_kmh = 20\ncp_w = 102\nassist_between_climbs = 1\n")
    assert rider.flat_power < 102 * 0.75
    with pytest.raises(
        ConfigError, match=r"flat_kmh: 20 km/h on the flat takes about 105 W .* above the CP \(102 W\)"
    ):
        _rider(tmp_path, "e-assist-city", "flat_kmh = 20\ncp_w = 102\nassist_between_climbs = 0\n")


def test_an_assist_level_the_motor_lacks_is_a_config_problem(tmp_path):
    with pytest.raises(ConfigError, match="assist"):
        _rider(tmp_path, "e-assist-city", "flat_kmh = 20\nassist_between_climbs = 9\n")


def test_thirty_kmh_on_the_flat_is_the_same_watts_as_solve(tmp_path):
    """One sea-level density (ISO 2533, 1.225 kg/m³) for a rider's flat speed and for
    ``solve --speed`` at altitude 0."""
    rider = _rider(tmp_path, "road-hoods", "flat_kmh = 30\n")
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["solve", "--speed", "30", "--vehicle", "road-hoods", "--json"]) == 0
    assert rider.flat_power == pytest.approx(json.loads(out.getvalue())["power_w"], rel=1e-6)
    assert rider.flat_power == pytest.approx(
        _wheel_power_needed(30 / 3.6, builtin_vehicles()["road-hoods"]) / rider.vehicle.efficiency, rel=1e-6
    )
