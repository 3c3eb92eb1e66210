"""The checker of one configuration: places of keys, and each table against the schema."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from cardgen.config.schema import RENAMED, SCHEMA, TABLE_ARRAYS, Spec
from cardgen.config.validators import VALIDATORS, Invalid, Place
from cardgen.errors import close_matches
from cardgen.profiles.vehicles import Vehicle

_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-]+)\s*=")


def line_index(text: str) -> dict[tuple[str, int | None, str], int]:
    """Line numbers of the TOML text's keys, by (section, index of a ``[[section]]``
    or None, key); "" is the header's own line. One pass over the text."""
    index: dict[tuple[str, int | None, str], int] = {}
    counts: dict[str, int] = {}
    section, number = "", None
    for line_no, line in enumerate(text.splitlines(), 1):
        header = _HEADER.match(line)
        if header:
            section = header.group(2)
            if header.group(1) == "[[":
                number = counts.get(section, -1) + 1
                counts[section] = number
            else:
                number = None
            index.setdefault((section, number, ""), line_no)
            continue
        key = _KEY.match(line)
        if key:
            index.setdefault((section, number, key.group(1)), line_no)
    return index


class Checker:
    """One pass over a configuration: every problem, warning and note, and every file
    read, collected with its place (file, line, key; or CSV row and column)."""

    def __init__(self, path: Path | None, text: str):
        self.path = path
        self.text = text
        self.lines = line_index(text)
        self.problems: list[str] = []
        self.warnings: list[str] = []
        self.inputs: list[Path] = []
        self.notes: list[str] = []
        self.csv_rows: dict[tuple[str, int | None], tuple[Path, int]] = {}
        self.vehicles: dict[str, Vehicle] = {}

    def where(self, section: str, index: int | None, key: str) -> str:
        if (section, index) in self.csv_rows:
            csv_path, row = self.csv_rows[(section, index)]
            return f"{csv_path}:row {row}" + (f", column {key}:" if key else "")
        name = f"{section}[{index}].{key}" if index is not None else f"{section}.{key}"
        line = self.lines.get((section, index, key))
        place = f"{self.path}" + (f", line {line}" if line else "") if self.path else "settings"
        return f"{place}: {name}"

    def value(
        self, section: str, table: dict[str, Any], index: int | None, key: str, spec: Spec, folder: Path
    ) -> Any:
        """The checked value of ``key`` (its default when missing or wrong: the problem
        is recorded)."""
        if key not in table:
            if spec.required:
                self.problems.append(
                    f"{self.where(section, index, key)} is missing ({spec.about or spec.kind})"
                )
            return spec.default
        place = Place(self.where(section, index, key), key, folder, self.vehicles, self.inputs)
        try:
            return VALIDATORS[spec.kind](table[key], spec, place)
        except Invalid as exc:
            self.problems.append(str(exc))
            return spec.default

    def table(
        self,
        section: str,
        table: Any,
        index: int | None,
        folder: Path,
        vehicles: dict[str, Any] | None = None,
    ) -> dict[str, Any]:
        schema = SCHEMA[section]
        if not isinstance(table, dict):
            shape = f"[[{section}]] tables" if section in TABLE_ARRAYS else f"a [{section}] table"
            self.problems.append(f"{self.path}: {section} must be {shape}, not {type(table).__name__}")
            return {key: None for key in schema}
        for key in table:
            if key in RENAMED and RENAMED[key] in schema:
                self.problems.append(
                    f"{self.where(section, index, key)}: this key is now '{RENAMED[key]}'; rename it"
                )
            elif key not in schema:
                known = [*schema, "csv"] if section == "riders" else list(schema)  # [[riders]] csv = "…"
                self.problems.append(
                    f"{self.where(section, index, key)}: unknown key{close_matches(key, known)}; "
                    f"the keys of [{section}] are {', '.join(schema)}"
                )
        self.vehicles = vehicles or {}
        return {key: self.value(section, table, index, key, spec, folder) for key, spec in schema.items()}
