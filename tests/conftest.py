"""Shared test helpers."""

from __future__ import annotations

import json
import subprocess

import pytest
from buildkit import cardgen_command
from hypothesis import settings

# Reproducible property tests: the same examples on every machine and every run.
settings.register_profile("cardgen", derandomize=True, deadline=None, max_examples=300)
settings.load_profile("cardgen")


@pytest.fixture
def run_cli():
    """Run the installed ``cardgen`` command; returns (exit code, stdout, stderr)."""

    def run(*args: str, cwd=None, parse_json: bool = False, timeout: float = 300):
        proc = subprocess.run(
            [*cardgen_command(), *args],
            capture_output=True,
            text=True,
            cwd=cwd,
            timeout=timeout,
        )
        out = json.loads(proc.stdout) if parse_json and proc.returncode == 0 else proc.stdout
        return proc.returncode, out, proc.stderr

    return run


@pytest.fixture(scope="session")
def demo_site(tmp_path_factory):
    """The bundled demo event, built once in-process (warnings are errors here)."""
    from cardgen.build import build_site
    from cardgen.config import load_config
    from cardgen.paths import demo_site

    config = load_config(demo_site())
    out = tmp_path_factory.mktemp("demo") / "site"
    report = build_site(config, out, jobs=2)
    return config, out, report
