"""Spreadsheets saved as CSV (the entrants file), read as rows of text."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from cardgen.errors import CardgenError
from cardgen.io.files import read_text_bounded


def read_csv(
    path: Path, what: str, error: type[CardgenError], max_rows: int
) -> tuple[list[str], list[dict[str, str | None]]]:
    """The header and at most ``max_rows + 1`` data rows of a UTF-8 CSV file (a byte-order
    mark allowed): one more than the caller allows, so that it can say the file is too long."""
    text = read_text_bounded(path, what, error)
    reader = csv.DictReader(io.StringIO(text.removeprefix("\ufeff")))
    header = list(reader.fieldnames or [])
    rows = []
    for row in reader:
        rows.append(row)
        if len(rows) > max_rows:
            break
    return header, rows
