"""The log as CSV: writing it safely for spreadsheets, reading past tests back.

Export: one row per test record, every record (superseded ones included,
marked in ``status``). A cell that a spreadsheet would run as a formula
(starting with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return) gets a
leading apostrophe, which spreadsheets show as text.

Import: the same columns (those only the export fills are ignored), read
row by row. Each row is checked on its own and reported with its line
number (the header is line 1); nothing here writes anything.

References
----------
RFC 4180 (CSV); OWASP "CSV Injection" (the characters to neutralise).
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

EXPORT_COLUMNS = (
    "building",
    "area",
    "floor",
    "fixture_tag",
    "fixture_id",
    "kind",
    "tested_on",
    "tested_by",
    "result",
    "observed_duration_min",
    "ran_to_cutoff",
    "open_circuit_v",
    "loaded_v",
    "load_a",
    "load_ohm",
    "pack_replaced",
    "action_taken",
    "notes",
    "record_id",
    "corrects_id",
    "status",
    "recorded_at",
)
# Columns an import reads into a new record; the others are the export's own.
IMPORTED_FIELDS = (
    "kind",
    "tested_on",
    "tested_by",
    "result",
    "observed_duration_min",
    "ran_to_cutoff",
    "open_circuit_v",
    "loaded_v",
    "load_a",
    "load_ohm",
    "pack_replaced",
    "action_taken",
    "notes",
)
NUMBER_FIELDS = frozenset(
    {"observed_duration_min", "open_circuit_v", "loaded_v", "load_a", "load_ohm"}
)
REQUIRED_COLUMNS = ("kind", "tested_on", "tested_by", "result")
MAX_ROWS = 20_000  # a year of monthly tests for 1,600 fixtures
ISO_DATE = re.compile(r"^\d{4}-\d{2}-\d{2}$")


def neutralise(value: Any) -> str:
    """A cell's text, with a leading apostrophe where a spreadsheet would see a formula."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "yes" if value else "no"
    text = f"{value:g}" if isinstance(value, float) else str(value)
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def restore(text: str) -> str:
    """Undo :func:`neutralise` on a cell read back (an apostrophe before a formula start)."""
    if text.startswith("'") and text[1:].startswith(FORMULA_STARTS):
        return text[1:]
    return text


def write_csv(rows: Iterable[Mapping[str, Any]], columns: tuple[str, ...] = EXPORT_COLUMNS) -> str:
    """Rows as CSV text (CRLF line ends, every cell neutralised)."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\r\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([neutralise(row.get(column)) for column in columns])
    return out.getvalue()


class CsvFileError(ValueError):
    """The file as a whole cannot be read (header, size); names the line."""

    def __init__(self, line: int, message: str) -> None:
        super().__init__(f"line {line}: {message}")
        self.line = line
        self.message = message


@dataclass(frozen=True, slots=True)
class CsvRow:
    """One data row: the line it starts on and its cells by column name."""

    line: int
    cells: dict[str, str]


def read_csv(text: str) -> list[CsvRow]:
    """The data rows of an import file, each with the line number it starts on.

    Raises
    ------
    CsvFileError
        When the header lacks a needed column or names an unknown one (a
        misspelt column would otherwise lose its data), or the file has more
        than :data:`MAX_ROWS` rows.
    """
    text = text.removeprefix("\ufeff")
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except StopIteration:
        raise CsvFileError(1, "the file is empty; the first line names the columns") from None
    except csv.Error as exc:
        raise CsvFileError(1, f"the header cannot be read ({exc})") from None
    names = [name.strip().lower() for name in header]
    unknown = [name for name in names if name and name not in EXPORT_COLUMNS]
    if unknown:
        raise CsvFileError(
            1,
            f"unknown column(s) {', '.join(unknown)}; the columns are those of the export: "
            + ", ".join(EXPORT_COLUMNS),
        )
    missing = [name for name in REQUIRED_COLUMNS if name not in names]
    if "fixture_tag" not in names and "fixture_id" not in names:
        missing.insert(0, "fixture_tag (or fixture_id)")
    if missing:
        raise CsvFileError(1, f"missing column(s): {', '.join(missing)}")
    rows: list[CsvRow] = []
    line = reader.line_num + 1
    try:
        for values in reader:
            if any(value.strip() for value in values):
                if len(rows) == MAX_ROWS:
                    raise CsvFileError(line, f"more than {MAX_ROWS} rows: split the file")
                cells = {
                    name: restore(value.strip())
                    for name, value in zip(names, values, strict=False)
                    if name
                }
                if len(values) > len(names):
                    cells["__extra__"] = str(len(values) - len(names))
                rows.append(CsvRow(line=line, cells=cells))
            line = reader.line_num + 1
    except csv.Error as exc:
        raise CsvFileError(line, f"the file cannot be read from here on ({exc})") from None
    return rows


def record_fields(cells: Mapping[str, str]) -> tuple[dict[str, Any], dict[str, str]]:
    """The record fields of one row, and the problems found before validation.

    Blank cells are left out (the field takes its default); a date must be
    written YYYY-MM-DD; a decimal comma is read as a point.
    """
    fields: dict[str, Any] = {}
    problems: dict[str, str] = {}
    if "__extra__" in cells:
        problems["row"] = f"{cells['__extra__']} more cell(s) than the header has columns"
    for name in IMPORTED_FIELDS:
        value = cells.get(name, "")
        if not value:
            continue
        if name == "tested_on" and not ISO_DATE.match(value):
            problems[name] = (
                f"write dates as YYYY-MM-DD (like 2027-03-14), not {value!r}: a date such as "
                "03/04/2027 reads as March or April depending on the country"
            )
            continue
        if name in NUMBER_FIELDS and "," in value and "." not in value:
            value = value.replace(",", ".")
        if name in ("kind", "result"):
            value = value.lower()
        fields[name] = value
    return fields, problems
