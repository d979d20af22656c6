"""ohmtally's neutral CSV: circuit records written so that the ``csv`` adapter reads them back.

Wide: a header of field names (units are in the names: ``zs_ohm``), one row per
circuit. Long: ``board,circuit,test,value,unit``, one row per field, ``test``
being the field name and ``unit`` its canonical unit symbol (blank for text,
choices and flags).

Invariants:
- Reading the output with the ``csv`` adapter (no profile) gives back records
  equal field by field in :func:`engine.record_to_dict` form, for any record
  whose text fields hold no line break (one physical line is one row).
- Readings are written as :meth:`engine.Reading.to_json` writes them: a plain
  number, or the bounded text (``>999``, ``OL``).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable

from engine import FIELDS, CircuitRecord, record_to_dict
from engine.readings import format_number

__all__ = ["LONG_COLUMNS", "WIDE_COLUMNS", "records_to_long_csv", "records_to_wide_csv"]

WIDE_COLUMNS: tuple[str, ...] = tuple(FIELDS)
LONG_COLUMNS: tuple[str, ...] = ("board", "circuit", "test", "value", "unit")


def _cell(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return format_number(value)
    return str(value)


def records_to_wide_csv(records: Iterable[CircuitRecord]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(WIDE_COLUMNS)
    for record in records:
        data = record_to_dict(record)
        writer.writerow([_cell(data[name]) if name in data else "" for name in WIDE_COLUMNS])
    return out.getvalue()


def records_to_long_csv(records: Iterable[CircuitRecord]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(LONG_COLUMNS)
    for record in records:
        for name, value in record_to_dict(record).items():
            if name in ("board", "circuit"):
                continue
            symbol = FIELDS[name].symbol or "" if FIELDS[name].kind in ("reading", "number") else ""
            writer.writerow([record.board, record.circuit, name, _cell(value), symbol])
    return out.getvalue()
