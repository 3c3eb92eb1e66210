"""Only io opens input files and only build writes into the site, and render computes
no plan: the source is read (its syntax tree, not its text) for every call that
opens, reads or writes a file, and for every call of a planning function from
render."""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "cardgen"
#: Calls that read a file: open() (also os.open, Path.open, io.open), read_text, read_bytes.
READS = {"open", "read_text", "read_bytes"}
#: Calls that write a file.
WRITES = {"write_text", "write_bytes"}
#: Where reading and writing are the module's job.
READERS = ("io/",)
WRITERS = ("build/",)
#: Every other place that may call one of them, and why.
EXCEPTIONS = {
    ("build/cache.py", "open"): "hashes the inputs and the previous site's files for the cache keys",
    ("build/cache.py", "read_text"): "reads the previous site's manifest.json, the build's own output",
    ("build/publish.py", "open"): "the build's lock file beside the output (flock)",
    ("build/pipeline.py", "open"): "a print pack's file, opened to write the pack into as it is streamed",
    ("render/pdf.py", "read_bytes"): "WeasyPrint's URL fetcher serves the build's own drawings to the card",
    (
        "render/packs.py",
        "pikepdf.open",
    ): "reads the cards this build made, one at a time, to stream them into packs",
    ("render/pdf.py", "pikepdf.open"): "a PDF in memory, to add a blank page",
    ("render/sandbox.py", "open"): "the process's own memory use (/proc/self/statm), bounding a theme",
    (
        "config/patterns.py",
        "read_text",
    ): "a built site's manifest, so that a route pattern skips cardgen's output",
    ("cli/route.py", "write_text"): "route --trace OUT.csv writes the file the user named, not the site",
}


def _calls(path: Path):
    """(line, name) of every call in the module that opens, reads or writes a file."""
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if not isinstance(node, ast.Call):
            continue
        func = node.func
        if isinstance(func, ast.Name) and func.id == "open":
            yield node.lineno, "open"
        elif isinstance(func, ast.Attribute) and func.attr in READS | WRITES:
            owner = func.value.id if isinstance(func.value, ast.Name) else ""
            # os.open, io.open and Path(...).open all open a file; pikepdf.open too
            yield node.lineno, ("pikepdf.open" if owner == "pikepdf" else func.attr)


def _offences() -> list[str]:
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        module = path.relative_to(PACKAGE).as_posix()
        for line, name in _calls(path):
            verb = name.rpartition(".")[2]
            allowed = READERS if verb in READS else WRITERS
            if module.startswith(allowed) or (module, name) in EXCEPTIONS:
                continue
            found.append(f"cardgen/{module}:{line}: {name}")
    return found


def test_only_io_reads_and_only_build_writes():
    assert _offences() == []


def test_every_exception_is_still_needed():
    used = {
        (path.relative_to(PACKAGE).as_posix(), name)
        for path in PACKAGE.rglob("*.py")
        for _, name in _calls(path)
    }
    assert set(EXCEPTIONS) <= used, set(EXCEPTIONS) - used


@pytest.mark.parametrize(
    "source, expected",
    [
        ("open('x')", ["open"]),
        ("import os\nos.open('x', 0)", ["open"]),
        ("p.read_text()", ["read_text"]),
        ("p.write_bytes(b'')", ["write_bytes"]),
        ("pikepdf.open(p)", ["pikepdf.open"]),
        ("p.exists()", []),
    ],
)
def test_the_scan_sees_each_kind_of_call(tmp_path, source, expected):
    module = tmp_path / "m.py"
    module.write_text(source, encoding="utf-8")
    assert [name for _, name in _calls(module)] == expected


#: What plan computes for the pages once per route (``plan.views.route_job``) and
#: build hands to render: the checkpoints' windows, the food and fluid legs and
#: rates, the spread of riders who start together, the day sheet's rows, the starts.
PLANNING = {
    "checkpoint_windows",
    "group_spread",
    "legs",
    "carb_rate",
    "fluid_rate",
    "day_points",
    "event_starts",
    "route_job",
    "plan_route",
    "make_plan",
}


def _planning_calls(path: Path):
    """(line, name) of every call in the module of a function named in PLANNING."""
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Call):
            func = node.func
            name = func.id if isinstance(func, ast.Name) else getattr(func, "attr", "")
            if name in PLANNING:
                yield node.lineno, name


def test_render_computes_no_plan():
    found = [
        f"cardgen/render/{path.name}:{line}: {name}"
        for path in sorted((PACKAGE / "render").rglob("*.py"))
        for line, name in _planning_calls(path)
    ]
    assert found == []


@pytest.mark.parametrize(
    "source, expected",
    [
        ("legs(plan, feeds, t)", ["legs"]),
        ("fuel.carb_rate(1.0)", ["carb_rate"]),
        ("x = view.legs", []),
    ],
)
def test_the_planning_scan_sees_calls_not_names(tmp_path, source, expected):
    module = tmp_path / "m.py"
    module.write_text(source, encoding="utf-8")
    assert [name for _, name in _planning_calls(module)] == expected
