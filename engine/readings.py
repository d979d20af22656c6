"""Measured readings that keep what the meter said, and the parser for them.

Invariants:
- A :class:`Reading` holds its value in the field's canonical unit (Ω, MΩ, kA,
  ms …), its relation (``=``, ``>``, ``<``) and the text it came from.
- A bounded reading stays bounded: ``> 999 MΩ`` is never turned into 999.
- An over-range marker without a number (``OL``, ``>``, ``---`` …) is a
  reading with relation ``>`` and no value: above the instrument's range.
- Text that is plainly "no reading" (empty, ``-``, ``n/a``, ``NT``) parses to
  ``None``; the field is then absent, not zero. Record builders see the cell
  words first (:mod:`engine.marks`): ``N/A`` is remembered as a mark, and ``NT``
  / "not tested" as a limitation (``LIM``), never as a silent absence.
- A unit that does not fit the field raises :class:`ReadingError` naming the
  field and the text; there is no silent conversion across dimensions.
- The sign is kept as the meter gave it, from a JSON number or from text alike
  (``-0.02``, ``"−0.02 Ω"`` with a minus sign): a small negative R1+R2 after
  lead nulling is real life. Whether a value is physically possible is judged
  where a check reads it (:mod:`engine.plausibility`), never here.

Over-range markers accepted (case-insensitive): ``OL``, ``O.L.``, ``OVER``,
``OVR``, ``OR``, ``∞``, ``INF``, ``>`` alone, ``>MAX``, and three or more dashes.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

from .errors import ReadingError
from .units import UnitMismatch, UnknownUnit, unit_factor

__all__ = ["DECLARE_COMMAS", "Reading", "Relation", "format_number", "parse_number", "parse_reading",
           "tidy_value"]

Relation = Literal["=", ">", "<"]

#: How a source declares decimal commas, said wherever a comma is refused.
DECLARE_COMMAS = (" (declare them with a '#% decimal=comma' line, the profile's decimal setting, "
                  "or ?decimal=comma)")
_OVER_RANGE = frozenset({"ol", "o.l", "o.l.", "over", "ovr", "or", "∞", "inf", ">", ">max", "> max"})
_NO_READING = frozenset({"", "-", "–", "n/a", "na", "nt", "n.t.", "not tested", "none", "null"})
_DASHES = re.compile(r"^-{3,}$")
_MINUS_SIGN = "\u2212"  # "−", as spreadsheets and some meters print a negative number
_RELATIONS: dict[str, Relation] = {
    ">": ">", ">=": ">", "≥": ">", "=>": ">",
    "<": "<", "<=": "<", "≤": "<", "=<": "<",
    "=": "=", "": "=",
}
_SHAPE = re.compile(
    r"""^\s*
    (?P<rel>>=|<=|=>|=<|[<>≤≥=])?\s*
    (?P<num>[+-]?(?:\d[\d,.\u2009\u202f ]*\d|\d)(?:[eE][+-]?\d+)?|[+-]?[.,]\d+)?\s*
    (?P<unit>[^\d\s].*?)?\s*$""",
    re.VERBOSE,
)


@dataclass(frozen=True, slots=True, kw_only=True)
class Reading:
    """A measured value in the field's canonical unit, with its relation."""

    value: float | None
    relation: Relation = "="
    text: str | None = None
    source: str | None = None

    def __post_init__(self) -> None:
        if self.value is None and self.relation != ">":
            raise ValueError("only an over-range reading ('>') may lack a value")
        if self.value is not None and not math.isfinite(self.value):
            raise ValueError("a reading's value must be finite")

    @property
    def lower(self) -> float:
        """The least the true value can be (0 for ``<`` readings: the quantities are ≥ 0).

        A reading at or below zero never reaches a comparison: :mod:`engine.plausibility`
        withholds it from every check first.
        """
        if self.relation == "<" or self.value is None:
            return 0.0 if self.value is None or self.relation == "<" else self.value
        return self.value

    @property
    def upper(self) -> float:
        """The most the true value can be (∞ for ``>`` readings)."""
        if self.relation == ">" or self.value is None:
            return math.inf
        return self.value

    @property
    def exact(self) -> bool:
        return self.relation == "=" and self.value is not None

    def display(self, symbol: str | None = None) -> str:
        """``"> 999 MΩ"``, ``"0.82 Ω"``, ``"OL"`` (over range, no bound)."""
        if self.value is None:
            return "OL"
        rel = "" if self.relation == "=" else f"{self.relation} "
        unit = f" {symbol}" if symbol else ""
        return f"{rel}{format_number(self.value)}{unit}"

    def to_json(self) -> float | str:
        """A plain number when exact, else the bounded text the parser reads back."""
        if self.exact:
            assert self.value is not None
            return self.value
        if self.value is None:
            return "OL"
        return f"{self.relation}{format_number(self.value)}"


@lru_cache(maxsize=4096)  # detail sentences print the same limits and readings again and again
def format_number(value: float) -> str:
    """Shortest text that reads back to the same float (``repr``), without ``.0``."""
    text = repr(float(value))
    return text[:-2] if text.endswith(".0") else text


def parse_number(text: str, *, decimal_comma: bool = False) -> float:
    """A plain number; ``decimal_comma`` reads ``0,82`` as 0.82 and ``.`` as grouping."""
    cleaned = text.strip().replace("\u2009", "").replace("\u202f", "").replace(" ", "")
    if decimal_comma:
        cleaned = cleaned.replace(".", "").replace(",", ".")
    elif "," in cleaned:
        raise ValueError(f"{text!r} has a comma, but the source does not declare decimal "
                         f"commas{DECLARE_COMMAS}")
    value = float(cleaned)
    if not math.isfinite(value):
        raise ValueError(f"{text!r} is not a finite number")
    return value


def parse_reading(
    raw: str | float | int,
    *,
    field: str,
    unit: str,
    default_unit: str | None = None,
    decimal_comma: bool = False,
    source: str | None = None,
) -> Reading | None:
    """Parse one reading for ``field`` whose canonical unit is ``unit``.

    ``default_unit`` is the unit a bare number is in (a column header's unit);
    it defaults to the canonical unit. Returns ``None`` for "no reading" text.
    """
    if isinstance(raw, bool):
        raise ReadingError(f"{field}: a reading must be a number or text, not a boolean",
                           field=field, text=str(raw))
    if isinstance(raw, int | float):
        if not math.isfinite(raw):
            raise ReadingError(f"{field}: {raw!r} is not a finite number", field=field, text=str(raw))
        factor = _factor(default_unit, unit, field, str(raw)) if default_unit else 1.0
        return Reading(value=tidy_value(float(raw) * factor), text=None, source=source)
    text = str(raw)
    folded = text.strip().lower()
    if folded in _NO_READING:
        return None
    if folded in _OVER_RANGE or _DASHES.match(folded):
        return Reading(value=None, relation=">", text=text, source=source)
    match = _SHAPE.match(text.replace(_MINUS_SIGN, "-"))
    if match is None or match.group("num") is None:
        # "OL MΩ", "> MΩ": an over-range marker with a unit after it
        head, _, tail = text.strip().partition(" ")
        if head.lower() in _OVER_RANGE and tail:
            _factor(tail, unit, field, text)
            return Reading(value=None, relation=">", text=text, source=source)
        raise ReadingError(f"{field}: cannot read {text!r} as a value", field=field, text=text)
    try:
        number = parse_number(match.group("num"), decimal_comma=decimal_comma)
    except ValueError as exc:
        raise ReadingError(f"{field}: {exc}", field=field, text=text) from exc
    token = match.group("unit")
    factor = 1.0
    if token:
        factor = _factor(token, unit, field, text)
    elif default_unit:
        factor = _factor(default_unit, unit, field, text)
    relation = _RELATIONS[match.group("rel") or ""]
    return Reading(value=tidy_value(number * factor), relation=relation, text=text, source=source)


def tidy_value(value: float) -> float:
    """Drop the binary noise a unit factor adds (350 mΩ → 0.35, not 0.35000000000000003)."""
    if value == 0.0:  # keeps the sign of a zero, which the cache below would not tell apart
        return value
    return _tidy_cached(value)


@lru_cache(maxsize=8192)  # meters print few distinct values; a million cells cost look-ups
def _tidy_cached(value: float) -> float:
    return float(f"{value:.12g}")


def _factor(token: str, unit: str, field: str, text: str) -> float:
    try:
        return unit_factor(token, unit)
    except UnitMismatch as exc:
        raise ReadingError(f"{field}: {exc} in {text!r}", field=field, text=text) from exc
    except UnknownUnit as exc:
        raise ReadingError(f"{field}: {exc} in {text!r}", field=field, text=text) from exc
