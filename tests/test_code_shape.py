"""The package's shape rules (the style guide's and the architecture issue's), read
from the source itself: no function over 120 lines, no complexity waiver, and each
unit factor and the still-air density written down in one place only."""

from __future__ import annotations

import ast
from pathlib import Path

import cardgen

PACKAGE = Path(cardgen.__file__).parent
#: The longest function a reader should have to hold at once [lines].
MAX_LINES = 120
#: Literal values that are unit factors or the sea-level density, and the one module
#: allowed to write each (km/h per m/s, 0 °C in K, s per h and J per Wh, the
#: international mile and foot, ISA sea-level density).
ONE_HOME = {
    3.6: "units.py",
    273.15: "units.py",
    3600.0: "units.py",
    1609.344: "units.py",
    0.3048: "units.py",
    1.225: "physics/atmosphere.py",
}


def _sources() -> list[tuple[str, ast.Module, str]]:
    return [
        (str(p.relative_to(PACKAGE)), ast.parse(p.read_text(encoding="utf-8")), p.read_text(encoding="utf-8"))
        for p in sorted(PACKAGE.rglob("*.py"))
    ]


def test_no_function_is_longer_than_a_reader_can_hold():
    long = [
        f"{name}:{node.lineno} {node.name} ({node.end_lineno - node.lineno + 1} lines)"
        for name, tree, _ in _sources()
        for node in ast.walk(tree)
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef)
        and node.end_lineno is not None
        and node.end_lineno - node.lineno + 1 > MAX_LINES
    ]
    assert not long


def test_no_complexity_waiver():
    waived = [name for name, _, text in _sources() if "noqa: C901" in text]
    assert not waived


def test_unit_factors_and_sea_level_density_are_written_once():
    elsewhere = [
        f"{name}:{node.lineno} {node.value!r}"
        for name, tree, _ in _sources()
        for node in ast.walk(tree)
        if isinstance(node, ast.Constant)
        and isinstance(node.value, int | float)
        and not isinstance(node.value, bool)
        and float(node.value) in ONE_HOME
        and ONE_HOME[float(node.value)] != name
    ]
    assert not elsewhere
