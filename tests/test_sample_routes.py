"""The demo routes are made by a script: the committed files are its output."""

import runpy
from pathlib import Path

SAMPLES = Path(__file__).resolve().parents[1] / "sample_routes"


def test_committed_routes_are_the_scripts_output(tmp_path):
    script = runpy.run_path(str(SAMPLES / "make_routes.py"))
    script["main"](tmp_path)
    made = sorted(p.name for p in tmp_path.glob("*.gpx"))
    assert made == sorted(p.name for p in SAMPLES.glob("*.gpx"))
    for name in made:
        assert (tmp_path / name).read_bytes() == (SAMPLES / name).read_bytes(), name
