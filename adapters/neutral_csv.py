"""ohmtally's neutral CSV: circuit records written so that the ``csv`` adapter reads them back.

Wide: a header of field names (units are in the names: ``zs_ohm``), one row per
circuit. Long: ``board,circuit,test,value,unit``, one row per field, ``test``
being the field name and ``unit`` its canonical unit symbol (blank for text,
choices and flags).

Trade notation a record keeps (``device``, ``cable``, ``rcd``: what
:func:`engine.record_to_dict` writes in place of the split fields it gave) has
its own columns (wide) or rows (long), and a field marked ``N/A`` or ``LIM``
holds the mark in its own cell, which the ``csv`` adapter reads back as the
mark. Refused values travel too, in their own place, never in the field's cell:
wide, a last column ``rejected`` holding ``field=text`` pairs in the line
format's spelling (``test_temp_c=-300 zs_ohm="0,8 8"``); long, one row per
refused field with test ``rejected`` and that pair as the value. Why not the
refused text in the field's own column: read back, it would be refused again
(an error on every re-import) or, where the refusal depended on the source's
decimal convention, even taken as a value; and leaving it out would let a
default take the refused value's place after a round trip.

Invariants:
- Reading the output with the ``csv`` adapter (no profile) gives back records
  equal field by field in :func:`engine.record_to_dict` form, notation, marks
  and ``rejected`` included, with no error, for any record whose texts hold no
  line break (one physical line is one row) and that :func:`engine.build_record`
  would build as it is (a record of the engine's own making).
- Readings are written as :meth:`engine.Reading.to_json` writes them: a plain
  number, or the bounded text (``>999``, ``OL``).
"""

from __future__ import annotations

import csv
import io
from collections.abc import Iterable

from engine import FIELDS, CircuitRecord, record_to_dict
from engine.intake import MARKS_KEY, REJECTED_KEY
from engine.readings import format_number
from engine.record_notation import NOTATION_SPLIT

from .line_format import format_pairs

__all__ = ["LONG_COLUMNS", "NOTATION_COLUMNS", "REJECTED_COLUMN", "WIDE_COLUMNS", "records_to_long_csv",
           "records_to_wide_csv"]

REJECTED_COLUMN = REJECTED_KEY  # the wide column, and the long layout's test, that carry refused values
NOTATION_COLUMNS: tuple[str, ...] = tuple(NOTATION_SPLIT)  # device, cable, rcd
WIDE_COLUMNS: tuple[str, ...] = (*FIELDS, *NOTATION_COLUMNS, REJECTED_COLUMN)
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
        marks = data.pop(MARKS_KEY, {})
        refused = format_pairs(list(record.rejected.items())) if record.rejected else ""
        writer.writerow([*(_cell(data[name]) if name in data else marks.get(name, "") for name in FIELDS),
                         *(data.get(name, "") for name in NOTATION_COLUMNS), refused])
    return out.getvalue()


def records_to_long_csv(records: Iterable[CircuitRecord]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(LONG_COLUMNS)
    for record in records:
        data = record_to_dict(record)
        for name, mark in data.pop(MARKS_KEY, {}).items():
            writer.writerow([record.board, record.circuit, name, mark, ""])
        for name, value in data.items():
            if name in ("board", "circuit", REJECTED_KEY):
                continue
            spec = FIELDS.get(name)  # None: a notation (device, cable, rcd), written as its text
            symbol = spec.symbol or "" if spec is not None and spec.kind in ("reading", "number") else ""
            writer.writerow([record.board, record.circuit, name, _cell(value), symbol])
        for name, text in record.rejected.items():
            writer.writerow([record.board, record.circuit, REJECTED_COLUMN, format_pairs([(name, text)]), ""])
    return out.getvalue()
