"""CSV: one row per circuit and check, for a spreadsheet or a data pipeline.

Invariants:
- Columns are :data:`CSV_COLUMNS`, in that order, with a header row; RFC 4180
  quoting and CRLF line ends (Python's ``csv`` writer, ``excel`` dialect).
- A circuit with no applicable check still has one row (empty check columns),
  so no circuit disappears from the sheet.
- Formula injection is neutralised (OWASP "CSV Injection"): a text cell that
  starts with ``=`` ``+`` ``-`` ``@`` TAB or CR gets a leading apostrophe, so a
  spreadsheet shows it as text instead of running it. A cell that is a plain
  number (``-0.12``, ``+5``, ``1e-3``) is left alone: it cannot run, and a
  negative margin must stay a number. The relation ``=`` therefore reads ``'=``
  (and is left empty where the check has no value).
- Rejected input is not in the CSV (its rows are circuits); the JSON body and
  the exit status carry it.
"""

from __future__ import annotations

import csv
import io
import re
from typing import Any

from ._text import fmt_value

__all__ = ["CSV_COLUMNS", "neutralise", "render_csv"]

CSV_COLUMNS: tuple[str, ...] = (
    "board", "circuit", "circuit_outcome", "check", "outcome", "value", "relation",
    "limit", "unit", "margin", "method", "basis", "detail",
)

_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def neutralise(cell: str) -> str:
    """The cell as a spreadsheet will show it as text, never evaluate it."""
    if cell.startswith(_FORMULA_START) and not _PLAIN_NUMBER.fullmatch(cell):
        return "'" + cell
    return cell


def _row(verdict: dict[str, Any], check: dict[str, Any] | None) -> list[str]:
    values: dict[str, Any] = {"board": verdict["board"], "circuit": verdict["circuit"],
                              "circuit_outcome": verdict["outcome"]}
    if check is not None:
        values.update({k: check.get(k) for k in CSV_COLUMNS[3:]})
        if values["value"] is None:
            values["relation"] = None  # a relation qualifies a value; alone it says nothing
    return [neutralise(fmt_value(values.get(column))) for column in CSV_COLUMNS]


def render_csv(body: dict[str, Any]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, dialect="excel")
    writer.writerow(CSV_COLUMNS)
    for verdict in body["verdicts"]:
        checks = verdict["checks"] or [None]
        for check in checks:
            writer.writerow(_row(verdict, check))
    return out.getvalue()
