"""Shared test helpers."""

from __future__ import annotations

import contextlib
import fcntl
import io
import json
import os
import pickle
import shutil
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


@pytest.fixture
def cli(monkeypatch):
    """Run cardgen's command line in this process (no interpreter start-up, no
    re-import: a tenth of the cost of :func:`run_cli`); returns (exit code, stdout,
    stderr). For tests of the commands themselves; a test of what a real process
    does (imports, tracebacks, the installed entry point) uses ``run_cli``."""
    from cardgen.cli import main

    def run(*args: str, cwd=None, parse_json: bool = False):
        if cwd is not None:
            monkeypatch.chdir(cwd)
        out, err = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = main(list(args))
            except SystemExit as exc:  # argparse's usage errors and --help
                code = exc.code if isinstance(exc.code, int) else 1
        text = out.getvalue()
        return code, (json.loads(text) if parse_json and code == 0 else text), err.getvalue()

    return run


@pytest.fixture(scope="session")
def demo_site(tmp_path_factory):
    """The bundled demo event, built once per test run in-process (warnings are errors
    here). Under pytest-xdist (``make test``) the first worker to need it builds it and
    the others wait for it, then read that build: one demo per run, not per worker."""
    from cardgen.build import build_site
    from cardgen.config import load_config
    from cardgen.paths import demo_site

    config = load_config(demo_site())
    if os.environ.get("PYTEST_XDIST_WORKER") is None:
        out = tmp_path_factory.mktemp("demo") / "site"
        return config, out, build_site(config, out, jobs=2)
    shared = tmp_path_factory.getbasetemp().parent  # this run's folder, above each worker's
    out, built = shared / "demo" / "site", shared / "demo-report.pickle"
    with open(shared / "demo.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)  # released when the file closes
        if not built.exists():
            out.parent.mkdir(exist_ok=True)
            built.write_bytes(pickle.dumps(build_site(config, out, jobs=2)))
    return config, out, pickle.loads(built.read_bytes())


@pytest.fixture(scope="session")
def large_print_demo(tmp_path_factory):
    """The demo event in large print: a copy of its folder with ``large_print = true``,
    built once per test process. Returns (config, site folder, report)."""
    from cardgen.build import build_site
    from cardgen.config import load_config
    from cardgen.paths import demo_site

    src = tmp_path_factory.mktemp("large-demo") / "src"
    shutil.copytree(demo_site().parent, src, ignore=shutil.ignore_patterns("__pycache__", "*.py"))
    toml = src / "site.toml"
    text = toml.read_text(encoding="utf-8")
    assert "large_print = false" in text
    toml.write_text(text.replace("large_print = false", "large_print = true"), encoding="utf-8")
    config = load_config(toml)
    out = src.parent / "site"
    return config, out, build_site(config, out, jobs=2)
