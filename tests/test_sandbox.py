"""The bounds on a theme's render (cardgen/render/sandbox.py), in this process and
fast; the whole-build cases are in tests/test_hostile_site.py."""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from cardgen.errors import CardgenError
from cardgen.render import sandbox
from cardgen.render.html import environment


def _render(tmp_path, body: str) -> str:
    (tmp_path / "page.html").write_text(body)
    return environment(tmp_path).get_template("page.html").render()


def test_ordinary_templates_render_as_before(tmp_path):
    body = "{{ 1 + 2 }} {{ range(3)|list }} {{ 'ab' * 3 }} {{ 2 ** 10 }} {{ [0] * 2 }}"
    assert _render(tmp_path, body) == "3 [0, 1, 2] ababab 1024 [0, 0]"


@pytest.mark.parametrize(
    ("body", "words"),
    [
        ("{{ 'x' * 10**10 }}", "10,000,000,000 items"),
        ("{{ [1, 2] * 6000000 }}", "12,000,000 items"),
        ("{{ 2 ** 100000 }}", "over 10,000 bits"),
        ("{% macro f(n) %}{{ f(n + 1) }}{% endmacro %}{{ f(0) }}", "calls itself"),
        ("\n{{ 1 / 0 }}", "line 2: ZeroDivisionError"),
    ],
)
def test_errors_are_one_line_naming_the_template(tmp_path, body, words):
    with pytest.raises(CardgenError) as caught:
        _render(tmp_path, body)
    text = str(caught.value)
    assert "page.html" in text and words in text and "\n" not in text


def test_a_render_past_its_time_is_stopped_and_leaves_nothing_behind(tmp_path, monkeypatch):
    monkeypatch.setattr(sandbox, "RENDER_SECONDS", 0.3)
    started = time.monotonic()
    with pytest.raises(CardgenError, match="took over 0 s"):
        _render(tmp_path, "{% for i in range(100000) %}{% for j in range(100000) %}{% endfor %}{% endfor %}")
    assert time.monotonic() - started < 5
    time.sleep(0.5)  # no stray timeout arrives later in this thread
    assert _render(tmp_path, "{{ 1 }}") == "1"


def test_a_render_in_another_thread_is_stopped_too(tmp_path, monkeypatch):
    """serve --watch rebuilds in a thread of its own."""
    monkeypatch.setattr(sandbox, "RENDER_SECONDS", 0.3)
    (tmp_path / "page.html").write_text(
        "{% for i in range(100000) %}{% for j in range(100000) %}{% endfor %}{% endfor %}"
    )
    template = environment(tmp_path).get_template("page.html")
    caught: list[BaseException] = []

    def run() -> None:
        try:
            template.render()
        except CardgenError as exc:
            caught.append(exc)

    thread = threading.Thread(target=run)
    thread.start()
    thread.join(10)
    assert not thread.is_alive() and caught


def test_memory_bound_and_the_limit_comes_back(tmp_path, monkeypatch):
    monkeypatch.setattr(sandbox, "RENDER_BYTES", 64 << 20)
    before = resource.getrlimit(resource.RLIMIT_AS)
    with pytest.raises(CardgenError, match="more than 64 MiB"):
        _render(tmp_path, "{{ ('x'|center(300000000))[:3] }}")
    assert resource.getrlimit(resource.RLIMIT_AS) == before
    assert _render(tmp_path, "{{ ('x'|center(1000))[:3] }}").strip() == ""


def test_a_template_nested_too_deep_is_a_syntax_error(tmp_path):
    import jinja2

    with pytest.raises(jinja2.TemplateSyntaxError, match="nests too deeply"):
        _render(tmp_path, "{% if 1 %}" * 3000 + "{% endif %}" * 3000)


_AFTER_A_TIMEOUT = """
import pathlib, sys
from cardgen.errors import CardgenError
from cardgen.render import sandbox
from cardgen.render.html import environment
sandbox.RENDER_SECONDS = 0.3
folder = pathlib.Path(sys.argv[1])
(folder / "page.html").write_text(
    "{% for i in range(100000) %}{% for j in range(100000) %}{% endfor %}{% endfor %}"
)
try:
    environment(folder).get_template("page.html").render()
except CardgenError:
    pass
total = 0
for i in range(200_000):
    total += i
print(total)
"""


def test_the_process_runs_on_after_a_timeout_under_a_trace_function(tmp_path):
    """A stopped render once left CPython's "asynchronous exception pending" flag up
    with nothing pending; under coverage's tracer the process then made no progress
    (a CI run hung over 5 min). Here a whole process renders past its time under
    coverage and must then finish an ordinary loop."""
    pytest.importorskip("coverage")
    script = tmp_path / "after_timeout.py"
    script.write_text(_AFTER_A_TIMEOUT)
    run = subprocess.run(
        [
            sys.executable,
            "-m",
            "coverage",
            "run",
            f"--data-file={tmp_path / 'cov'}",
            str(script),
            str(tmp_path),
        ],
        capture_output=True,
        text=True,
        timeout=60,
        env={**os.environ, "PYTHONPATH": str(Path(sandbox.__file__).parents[2])},
        check=False,
    )
    assert run.returncode == 0, run.stderr[-2000:]
    assert run.stdout.strip() == str(sum(range(200_000)))
