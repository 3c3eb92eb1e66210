"""The installed package: what the wheel ships, and that its command runs.

These tests read the installed distribution's own file list, so they check the
install whether the suite runs against it or against a checkout (make check).
"""

import sysconfig
from importlib import metadata

import pytest

pytestmark = pytest.mark.slow  # builds whole sites, fuzzes or checks the install: not in make check


def _shipped() -> set[str]:
    """The files of the cardgen installed in this environment's site-packages (not a
    checkout's egg-info, which a PYTHONPATH run would find first)."""
    purelib = sysconfig.get_paths()["purelib"]
    found = [d for d in metadata.distributions(path=[purelib]) if d.metadata["Name"] == "cardgen"]
    if not found:
        pytest.fail("cardgen is not installed in this environment; run 'make test' (it installs it)")
    return {f.as_posix() for f in found[0].files or ()}


@pytest.mark.parametrize(
    "path",
    [
        "cardgen/profiles/data/vehicles.toml",
        "cardgen/profiles/data/motors.toml",
        "cardgen/templates/card.html",
        "cardgen/templates/route.html",
        "cardgen/templates/style.css",
        "cardgen/sample_routes/site.toml",
        "cardgen/sample_routes/hill-loop.gpx",
    ],
)
def test_the_wheel_ships_the_data_templates_and_demo(path):
    assert path in _shipped()


def test_the_wheel_ships_every_module_of_the_source_tree():
    from pathlib import Path

    repo = Path(__file__).resolve().parents[1]
    sources = {p.relative_to(repo).as_posix() for p in (repo / "cardgen").rglob("*.py")}
    missing = sources - _shipped()
    assert not missing, f"modules missing from the installed package: {sorted(missing)}"


def test_help_lists_every_command_with_one_line(run_cli):
    code, out, err = run_cli("--help")
    assert code == 0, err
    for command in ("build", "check", "route", "solve", "vehicles", "serve"):
        lines = [line for line in out.splitlines() if line.strip().startswith(command + " ")]
        assert len(lines) == 1 and len(lines[0].split()) > 2, f"{command}: {lines}"
