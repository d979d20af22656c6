"""One raw value → the typed value of one field, by the field's spec: the one rule for every intake.

Invariants:
- :func:`coerce_spec` is the rule; :func:`coerce_field` (circuit fields, by name)
  and :func:`engine.site.coerce_site_field` (board and installation fields) are
  it applied to a table. JSON numbers, text, CSV cells and logger lines all pass
  through it, so the same text means the same everywhere.
- ``None`` means absent: a blank cell, ``N/A`` (:mod:`engine.marks`). ``LIM`` and
  "not tested" raise :class:`engine.marks.MarkedCell`: a limitation is said,
  never dropped. A bad value raises :class:`ReadingError` naming the field and
  quoting the text; nothing is guessed.
- The sign rule: a measured reading keeps its sign (plausibility judges it
  later); a design value (a rating, a size, IΔn, a length, U0 …) must be above
  zero, else it is refused; a temperature outside −60…250 °C is refused.
- ``earthing`` reads the trade's notation (``TN-C-S (PME)``, ``PME``, ``TNCS``)
  through :func:`engine.notation.parse_earthing`.
"""

from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Any

from .errors import ReadingError
from .fields import FIELDS, FieldSpec
from .marks import NOT_APPLICABLE, MarkedCell, cell_mark, is_blank
from .notation import Notation, parse_earthing
from .readings import Reading, format_number, parse_number, parse_reading, tidy_value

__all__ = ["coerce_field", "coerce_spec", "normalise_standard"]

_TRUE = frozenset({"true", "yes", "y", "1", "ok", "pass", "passed", "correct", "✓", "✔", "t"})
_FALSE = frozenset({"false", "no", "n", "0", "fail", "failed", "incorrect", "wrong", "x", "✗", "✘", "f"})
_CHOICE_ALIASES: dict[str, dict[str, str]] = {
    "earthing": {"tns": "TN-S", "tncs": "TN-C-S", "pme": "TN-C-S", "tt": "TT", "it": "IT"},
    "conductor_material": {"cu": "copper", "copper": "copper", "al": "aluminium",
                           "aluminium": "aluminium", "aluminum": "aluminium"},
    "device_kind": {"mcb": "breaker", "cb": "breaker", "breaker": "breaker", "rcbo": "rcbo",
                    "fuse": "fuse", "other": "other"},
    "load_type": {"lighting": "lighting", "lights": "lighting", "other": "other", "power": "other"},
    "cable_type": {"te": "twin_and_earth", "tande": "twin_and_earth", "twinandearth": "twin_and_earth",
                   "twinearth": "twin_and_earth", "singlecore": "single_core", "singles": "single_core",
                   "t&e": "twin_and_earth", "multicore": "multicore", "armoured": "armoured",
                   "armored": "armoured", "swa": "armoured"},
    "premises": {"domestic": "domestic", "dwelling": "domestic", "house": "domestic", "other": "other",
                 "commercial": "other", "industrial": "other"},
}
_FOLD = re.compile(r"[\s\-_./]+")


def _fold(text: str) -> str:
    return _FOLD.sub("", text).lower()


@lru_cache(maxsize=1024)  # a job names a handful of standards, on every circuit
def normalise_standard(text: str) -> str:
    """``"bs en60898"`` → ``"BS EN 60898"``, ``"BS88-2"`` → ``"BS 88-2"``."""
    out = re.sub(r"\s+", " ", text.strip().upper())
    out = re.sub(r"^BSEN\b|^BS\s*EN(?=\d)", "BS EN ", out)
    out = re.sub(r"^(BS|IEC|EN)(?=\d)", r"\1 ", out)
    out = re.sub(r"^BS EN(?=\d)", "BS EN ", out)
    return re.sub(r"\s+", " ", out)


def coerce_field(
    name: str,
    raw: Any,
    *,
    default_unit: str | None = None,
    decimal_comma: bool = False,
    source: str | None = None,
) -> Any:
    """Turn one raw value into the circuit field's typed value; ``None`` means absent.

    Raises :class:`ReadingError` (a subclass of ``EngineError``) for a bad value,
    and :class:`engine.marks.MarkedCell` (one of them) for ``LIM`` / "not tested".
    """
    spec = FIELDS.get(name)
    if spec is None:
        raise ReadingError(f"unknown field {name!r}", field=name, text=None)
    return coerce_spec(spec, raw, default_unit=default_unit, decimal_comma=decimal_comma, source=source)


def coerce_spec(
    spec: FieldSpec,
    raw: Any,
    *,
    default_unit: str | None = None,
    decimal_comma: bool = False,
    source: str | None = None,
) -> Any:
    """Turn one raw value into the typed value ``spec`` describes; ``None`` means absent."""
    if raw is None:
        return None
    if isinstance(raw, str):
        mark = cell_mark(raw)
        if mark == NOT_APPLICABLE:
            return None
        if mark is not None:
            raise MarkedCell(spec.name, raw)
    if spec.kind == "reading":
        if isinstance(raw, Reading):
            return raw
        assert spec.unit is not None
        return parse_reading(raw, field=spec.name, unit=spec.unit, default_unit=default_unit,
                             decimal_comma=decimal_comma, source=source)
    if is_blank(raw):
        return None
    return _COERCE[spec.kind](spec, raw, default_unit, decimal_comma)


def _text(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> str:
    if isinstance(raw, bool) or not isinstance(raw, str | int | float):
        raise ReadingError(f"{spec.name}: expected text", field=spec.name, text=repr(raw))
    text = format_number(raw) if isinstance(raw, float) else str(raw).strip()
    if spec.name == "device_standard":
        return normalise_standard(text)
    return text


def _choice(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> str:
    if type(raw) is int and str(raw) in spec.choices:  # reference method 100 as a JSON number
        return str(raw)
    if not isinstance(raw, str):
        raise ReadingError(f"{spec.name}: expected one of {', '.join(spec.choices)}",
                           field=spec.name, text=repr(raw))
    if raw in spec.choices:  # already canonical (every stored record): what the folding gives
        return raw
    folded = _fold(raw)
    aliases = _CHOICE_ALIASES.get(spec.name, {})
    if folded in aliases:
        return aliases[folded]
    for choice in spec.choices:
        if _fold(choice) == folded:
            return choice
    if spec.name == "earthing":  # "TN-C-S (PME)" as schedules write it
        try:
            found = parse_earthing(raw)
        except ReadingError:
            found = None
        if isinstance(found, Notation):
            return str(found.fields["earthing"])
    raise ReadingError(f"{spec.name}: {raw!r} is not one of {', '.join(spec.choices)}",
                       field=spec.name, text=raw)


def _flag(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> bool:
    if isinstance(raw, bool):
        return raw
    if isinstance(raw, int) and raw in (0, 1):
        return bool(raw)
    if isinstance(raw, str):
        folded = raw.strip().lower()
        if folded in _TRUE:
            return True
        if folded in _FALSE:
            return False
    raise ReadingError(f"{spec.name}: expected true or false, got {raw!r}",
                       field=spec.name, text=str(raw))


def _count(spec: FieldSpec, raw: Any, _u: str | None, _d: bool) -> int:
    value: Any = raw
    if isinstance(raw, str):
        value = raw.strip()
        value = int(value) if value.isdigit() else value
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    if isinstance(value, bool) or not isinstance(value, int) or str(value) not in spec.choices:
        raise ReadingError(f"{spec.name}: expected one of {', '.join(spec.choices)}, got {raw!r}",
                           field=spec.name, text=str(raw))
    return value


def _number(spec: FieldSpec, raw: Any, default_unit: str | None, decimal_comma: bool) -> float:
    if isinstance(raw, bool):
        raise ReadingError(f"{spec.name}: expected a number", field=spec.name, text=str(raw))
    if spec.unit == "degC":
        return _temperature(spec, raw, decimal_comma)
    if default_unit is None and type(raw) in (int, float) and math.isfinite(raw):
        value = tidy_value(float(raw))  # what parse_reading gives a bare number, without the Reading
    else:
        assert spec.unit is not None
        reading = parse_reading(raw, field=spec.name, unit=spec.unit, default_unit=default_unit,
                                decimal_comma=decimal_comma)
        if reading is None:
            raise ReadingError(f"{spec.name}: expected a number", field=spec.name, text=str(raw))
        if not reading.exact:
            raise ReadingError(f"{spec.name}: a design value cannot be bounded or over range",
                               field=spec.name, text=str(raw))
        assert reading.value is not None
        value = reading.value
    if not value > 0.0:
        raise ReadingError(f"{spec.name}: a design value must be above zero, got {raw!r}",
                           field=spec.name, text=str(raw))
    return value


_TEMPERATURE = re.compile(r"^\s*([+-]?[\d.,]+)\s*(°\s*C|deg\s*C|C|degC)?\s*$", re.IGNORECASE)


def _temperature(spec: FieldSpec, raw: Any, decimal_comma: bool) -> float:
    if isinstance(raw, int | float):
        value = float(raw)
    else:
        match = _TEMPERATURE.match(str(raw))
        if match is None:
            raise ReadingError(f"{spec.name}: expected a temperature in °C, got {raw!r}",
                               field=spec.name, text=str(raw))
        try:
            value = parse_number(match.group(1), decimal_comma=decimal_comma)
        except ValueError as exc:
            raise ReadingError(f"{spec.name}: {exc}", field=spec.name, text=str(raw)) from exc
    if not math.isfinite(value) or not -60.0 <= value <= 250.0:
        raise ReadingError(f"{spec.name}: {raw!r} is outside -60…250 °C",
                           field=spec.name, text=str(raw))
    return value


_COERCE = {"text": _text, "choice": _choice, "flag": _flag, "count": _count, "number": _number}
