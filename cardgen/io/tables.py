"""Spreadsheets saved as CSV (the entrants file), read as rows of text."""

from __future__ import annotations

import csv
import io
from pathlib import Path

from cardgen.errors import CardgenError
from cardgen.io.files import read_text_bounded

#: Longest cell of a CSV file [characters]: the csv module's own limit (131,072),
#: far beyond any name or list of routes.
MAX_CELL = csv.field_size_limit()
#: Rows named in one message about cells beyond the header.
ROWS_NAMED = 5


def read_csv(
    path: Path, what: str, error: type[CardgenError], max_rows: int
) -> tuple[list[str], list[dict[str, str | None]], str]:
    """The header, at most ``max_rows + 1`` data rows of a UTF-8 CSV file (a byte-order
    mark allowed: one more than the caller allows, so that it can say the file is too
    long), and a problem: rows with more cells than the header has columns and something
    in them, named by number ("" when there are none; such cells are never dropped
    silently).

    Lines may end in LF, CR LF or CR alone (old Mac files). Rows are numbered as a
    spreadsheet numbers them, the header being row 1. A cell longer than
    :data:`MAX_CELL` characters or a quote left open is ``error`` naming the row."""
    text = read_text_bounded(path, what, error)
    reader = csv.DictReader(io.StringIO(text.removeprefix("\ufeff"), newline=""), strict=True)
    rows: list[dict[str, str | None]] = []
    over: list[int] = []
    try:
        header = list(reader.fieldnames or [])
        for row in reader:
            extra = row.pop(None, None)
            if extra and any(str(cell).strip() for cell in extra):
                over.append(len(rows) + 2)
            rows.append(row)
            if len(rows) > max_rows:
                break
    except csv.Error as exc:
        raise error(f"{path}:row {len(rows) + 2 if reader.fieldnames else 1}: {_reason(exc)}") from None
    problem = ""
    if over:
        named = ", ".join(str(n) for n in over[:ROWS_NAMED])
        more = f" and {len(over) - ROWS_NAMED} more" if len(over) > ROWS_NAMED else ""
        problem = (
            f"{path}:row {named}{more}: more cells than the header has columns ({len(header)}); "
            "name every column in row 1, or remove what is beyond the last one"
        )
    return header, rows, problem


def _reason(exc: csv.Error) -> str:
    """What a CSV reading error means, and its fix."""
    text = str(exc)
    if "field larger than field limit" in text:
        return f"a cell longer than {MAX_CELL:,} characters; is a quote left open?"
    if "unexpected end of data" in text or "EOF" in text:
        return "a quoted cell is never closed; close its quote"
    return f"not readable as CSV ({text}); save the sheet again as CSV"
