"""The built-in vehicle library and users' own profile files."""

import pytest

from cardgen.errors import VehicleError
from cardgen.physics.forces import G0
from cardgen.profiles.vehicles import builtin_vehicles, find_vehicle, load_vehicles

REQUIRED = {
    "city-upright",
    "mountain-bike",
    "road-hoods",
    "road-drops",
    "cargo-empty",
    "cargo-loaded",
    "tandem",
    "trike-recumbent",
    "handcycle",
    "e-assist-city",
    "e-assist-cargo",
}
COEFFICIENTS = [
    "vehicle_mass_kg",
    "rider_mass_kg",
    "cda_m2",
    "crr",
    "efficiency",
    "wheel_inertia_kg",
    "gross_efficiency",
    "typical_power_w",
    "climb_speed_kmh",
    "max_descent_speed_kmh",
    "curve_accel_g",
]


def test_library_has_every_vehicle_the_users_need():
    assert REQUIRED <= set(builtin_vehicles())


@pytest.mark.parametrize("name", sorted(REQUIRED))
def test_every_coefficient_names_its_source(name):
    vehicle = builtin_vehicles()[name]
    for key in COEFFICIENTS:
        assert len(vehicle.sources.get(key, "")) > 10, f"{name}: no source for {key}"


def test_published_values_in_the_library():
    lib = builtin_vehicles()
    # Wilson (2004), Bicycling Science 3rd ed. [S]: upright 0.63, hoods 0.40, crouch 0.32.
    assert lib["city-upright"].cda == pytest.approx(1.15 * 0.55, abs=0.005)
    assert lib["road-hoods"].cda == pytest.approx(0.40)
    assert lib["road-drops"].cda == pytest.approx(0.88 * 0.36, abs=0.005)
    # Martin et al. (1998) drivetrain efficiency 0.976 [S].
    assert lib["road-hoods"].efficiency == pytest.approx(0.976)
    # Groen et al. (2010) handcycle fit P = 0.20 v³ + ...: CdA = 2·0.20/1.2 for elite
    # riders in a racing position; a recreational handcycle is no more streamlined.
    assert lib["handcycle"].cda >= 2 * 0.20 / 1.2
    # FHWA-HRT-04-103 (2004): hand cycles took curves at friction factors ≈ 0.15.
    assert lib["handcycle"].curve_accel == pytest.approx(0.15 * G0)


def test_three_wheelers_have_no_balance_minimum():
    lib = builtin_vehicles()
    assert lib["handcycle"].min_stable_speed == 0.0
    assert lib["trike-recumbent"].min_stable_speed == 0.0
    # common practice ≈ 5–6 km/h, no published source
    assert 5.0 / 3.6 <= lib["road-hoods"].min_stable_speed <= 6.0 / 3.6


def test_user_file_starting_from_a_builtin(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text('[my-tourer]\nbase = "road-hoods"\nlabel = "Loaded tourer"\nvehicle_mass_kg = 30\n')
    vehicle = find_vehicle(str(path))
    assert vehicle.name == "my-tourer"
    assert vehicle.vehicle_mass == 30.0
    assert vehicle.cda == pytest.approx(0.40)
    assert vehicle.sources["vehicle_mass_kg"] == "user file mine.toml"


def test_user_file_reports_every_problem_with_file_and_key(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text('[broken]\nbase = "road-hoods"\nvehicle_mass_kg = -4\ncrr = "low"\nsaddle = 3\n')
    with pytest.raises(VehicleError) as info:
        load_vehicles(path)
    message = str(info.value)
    assert str(path) in message
    for key in ("vehicle_mass_kg", "crr", "saddle"):
        assert key in message


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("not toml [", "not valid TOML"),
        ("", "no vehicle tables"),
        ("x = 1\n", "must be a table"),
        ('[a]\nbase = "rocket"\n', "not a built-in vehicle"),
    ],
)
def test_broken_files_are_clear_errors(tmp_path, text, fragment):
    path = tmp_path / "v.toml"
    path.write_text(text)
    with pytest.raises(VehicleError, match=fragment):
        load_vehicles(path)


def test_unknown_name_lists_the_choices():
    with pytest.raises(VehicleError, match="road-hoods"):
        find_vehicle("penny-farthing")


def test_rider_defaults_follow_the_vehicle():
    from cardgen.profiles.riders import Rider

    hand = Rider.for_vehicle(builtin_vehicles()["handcycle"])
    # Janssen, Dallmeijer & van der Woude (2001): race POmax 55 ± 25 W (arm impairment)
    # to 129 ± 26 W (none); a default CP must sit inside that span
    assert 55 - 25 <= hand.cp <= 129 + 26
    assert hand.flat_power <= hand.cp
    road = Rider.for_vehicle(builtin_vehicles()["road-hoods"])
    assert road.cp > hand.cp


@pytest.mark.parametrize(
    "given, fragment",
    [
        ({"flat_power": 400.0, "cp": 200.0}, "flat power"),
        ({"cp": 5000.0}, "critical power"),
        ({"w_prime": -1.0}, "W′"),
        ({"target_speed": 0.0}, "target climbing speed"),
        ({"assist_between_climbs": 9}, "assist level between climbs"),
    ],
)
def test_impossible_riders_are_refused(given, fragment):
    from cardgen.profiles.riders import Rider

    with pytest.raises(VehicleError, match=fragment):
        Rider.for_vehicle(builtin_vehicles()["e-assist-city"], **given)


def test_climb_power_is_capped_above_cp():
    from cardgen.profiles.riders import Rider

    rider = Rider.for_vehicle(builtin_vehicles()["road-hoods"], cp=200.0, climb_power=400.0, climb_share=0.1)
    assert rider.climb_power_used == pytest.approx(220.0)


@pytest.mark.parametrize("max_power, race_kmh", [(55.0, 13.6), (129.0, 19.9)])
def test_handcycle_against_janssen_2001(max_power, race_kmh):
    """Janssen, Dallmeijer & van der Woude (2001), J. Rehabil. Res. Dev. 38:33–40: 10 km
    race speed 13.6 km/h (arm impairment, POmax 55 W) and 19.9 km/h (none, 129 W).
    Riders race at or below their ergometer maximum, so at that maximum the model must
    be at least as fast as the race, and not far faster (within 15 %)."""
    from cardgen.physics.steady import speed_for_power

    v = builtin_vehicles()["handcycle"]
    speed = speed_for_power(
        max_power, mass=v.mass, crr=v.crr, cda=v.cda, efficiency=v.efficiency, air_density=1.2
    )
    assert race_kmh <= speed * 3.6 <= race_kmh * 1.15
