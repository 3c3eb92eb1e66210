"""The suite must test the installed package, not the source tree by accident."""

from pathlib import Path

import cardgen

REPO = Path(__file__).resolve().parents[1]


def test_cardgen_is_imported_from_the_installed_package():
    here = Path(cardgen.__file__).resolve()
    assert REPO / "cardgen" not in here.parents, f"imported from the source tree: {here}"
    assert "site-packages" in here.parts


def test_builtin_vehicle_data_ships_with_the_package():
    assert (Path(cardgen.__file__).parent / "data" / "vehicles.toml").is_file()


def test_help_lists_every_command(run_cli):
    code, out, err = run_cli("--help")
    assert code == 0, err
    for command in ("solve", "vehicles"):
        assert command in out
