"""Trade notation in a circuit's data (``device``, ``cable``, ``rcd``) read into its split fields.

A reading may say what a schedule says: ``"device": "B32"``, ``"cable": "2.5/1.5"``,
``"rcd": "30mA A"`` (:mod:`engine.notation` reads them). This module decides
what such text does to a record; ``earthing`` is a field and reads its notation
where every field is coerced (:mod:`engine.coerce`).

Invariants:
- Never a guess. A notation that cannot be read is a ``bad_notation`` error
  quoting the text, and the split fields it would have given are remembered as
  refused (``rejected``), so the checks that need them say so.
- A split field given beside a notation that says otherwise (``"device": "B32"``
  with ``"device_rating_a": 20``), or two notations that disagree, is a
  ``notation_conflict`` error naming both, and the field is refused: neither
  value is used. A split field that agrees is simply the same value.
- ``N/A`` or ``LIM`` written as the notation marks its split fields (``rcd``
  ``N/A``: the circuit has no RCD).
- The record keeps each notation's text (``CircuitRecord.notation``, name →
  text), so :func:`engine.record_to_dict` writes the text back in place of the
  split fields it gave, and what the notation inferred (the standard of a bare
  ``B32``) is reported in the verdict's ``inferred`` (:func:`notation_values`).
  With a decimal comma declared, the kept text has ``.`` for ``,`` so that it
  reads back without the declaration.
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import lru_cache
from typing import Any

from .intake import FieldError, Intake
from .notation import Notation, NotationError, parse_notation
from .readings import Reading, format_number

__all__ = ["NOTATION_INPUTS", "NOTATION_SPLIT", "apply_notation", "notation_values"]

#: The split fields each notation input stands for (what a mark or an unreadable text covers).
NOTATION_SPLIT: Mapping[str, tuple[str, ...]] = {
    "device": ("device_kind", "device_standard", "device_curve", "device_rating_a"),
    "cable": ("line_mm2", "cpc_mm2"),
    "rcd": ("rcd_residual_ma", "rcd_type", "rcd_delayed"),
}
NOTATION_INPUTS: frozenset[str] = frozenset(NOTATION_SPLIT)


def _shown(value: Any) -> str:
    if isinstance(value, Reading):
        return value.display()
    if isinstance(value, float):
        return format_number(value)
    return str(value)


def apply_notation(data: Mapping[str, Any], intake: Intake, *, decimal_comma: bool) -> dict[str, str]:
    """Read the notation inputs of ``data`` into ``intake``; returns the texts to keep (name → text)."""
    kept: dict[str, str] = {}
    given_by: dict[str, tuple[str, str]] = {}  # split field → (notation, text) that set it
    explicit = set(intake.values) | set(intake.rejected) | set(intake.marks)
    for name in NOTATION_SPLIT:
        if name not in data:
            continue
        raw = data[name]
        try:
            found = parse_notation(name, raw, decimal_comma=decimal_comma)
        except NotationError as exc:
            intake.errors.append(FieldError(field=name, code="bad_notation", reason=exc.message,
                                            text=exc.text))
            for split in NOTATION_SPLIT[name]:
                if split not in explicit and split not in given_by:
                    intake.rejected[split] = exc.text if exc.text is not None else repr(raw)
            continue
        if found is None:
            continue
        text = str(raw)
        if isinstance(found, Notation):
            values: dict[str, Any] = dict(found.fields)
        else:  # N/A or LIM: every split field it stands for is marked
            mark = "N/A" if found.code == "not_applicable" else "LIM"
            values = dict.fromkeys(NOTATION_SPLIT[name], mark)
        for split, value in values.items():
            _take(split, value, isinstance(found, Notation), name, text, intake, explicit, given_by)
        if isinstance(found, Notation):
            kept[name] = text.replace(",", ".") if decimal_comma else text
    intake.settle()
    return kept


def _take(split: str, value: Any, is_value: bool, name: str, text: str, intake: Intake,
          explicit: set[str], given_by: dict[str, tuple[str, str]]) -> None:
    """One split field from a notation: set it, or agree with what is there, or refuse both."""
    if split in given_by:
        other, other_text = given_by[split]
        mine = intake.values.get(split, intake.marks.get(split))
        if mine != value:
            said = f"{other} {other_text!r} gives {split} {_shown(mine)}"
            _conflict(split, said, name, text, value, intake)
        return
    if split in explicit:
        if split in intake.rejected:
            return  # refused as given: rejected is never replaced, not even by the notation
        have = intake.values.get(split, intake.marks.get(split))
        if have != value:
            _conflict(split, f"{split} is given as {_shown(have)}", name, text, value, intake)
        return
    given_by[split] = (name, text)
    if is_value:
        intake.values[split] = value
    else:
        intake.marks[split] = value


def _conflict(split: str, other: str, name: str, text: str, value: Any, intake: Intake) -> None:
    intake.errors.append(FieldError(
        field=name, code="notation_conflict", text=text,
        reason=f"{name} {text!r} gives {split} {_shown(value)}, but {other}: neither is used"))
    intake.values.pop(split, None)
    intake.marks.pop(split, None)
    intake.rejected[split] = f"{name} {text!r} gives {_shown(value)}; {other}"


@lru_cache(maxsize=1024)  # a job writes a handful of devices and cables, on every circuit
def _parsed(name: str, text: str) -> tuple[tuple[tuple[str, Any], ...], frozenset[str]]:
    found = parse_notation(name, text)
    if not isinstance(found, Notation):
        return (), frozenset()
    return tuple(found.fields.items()), frozenset(found.inferred)


def notation_values(notation: Mapping[str, str]) -> tuple[dict[str, Any], frozenset[str]]:
    """The split fields a record's kept notation gives (field → value), and which of them it inferred."""
    values: dict[str, Any] = {}
    inferred: set[str] = set()
    for name, text in notation.items():
        try:
            fields, guessed = _parsed(name, text)
        except NotationError:  # a kept text always reads back; a hand-made record may not
            continue
        values.update(fields)
        inferred.update(guessed)
    return values, frozenset(inferred)
