"""Cell text → typed field value, with a bounded cache per (field, unit, decimal).

Invariants:
- The value is exactly what :func:`engine.coerce_field` gives for the same
  text, unit and decimal convention; the cache only saves repeating the work.
  Meters print few distinct values (0.82, 0.83 …), so a million rows cost
  dictionary look-ups for most cells.
- Typed values are immutable (frozen :class:`engine.Reading`, float, str, bool),
  so a cached value is safely shared between fragments.
- A bad cell gives a :class:`CellProblem` (reason, text), never an exception.
- The cache is bounded (cleared when full), so memory stays constant in the
  size of the input.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from engine import FIELDS, EngineError, Reading, coerce_field

__all__ = ["CellParser", "CellProblem", "scaled"]

_CACHE_LIMIT = 8192


@dataclass(frozen=True, slots=True)
class CellProblem:
    reason: str
    text: str | None


class CellParser:
    """Parses the cells of one column (one field, one header unit, one scale)."""

    __slots__ = ("_cache", "decimal_comma", "field", "scale", "unit")

    def __init__(self, field: str, *, unit: str | None = None, decimal_comma: bool = False,
                 scale: float = 1.0) -> None:
        self.field = field
        self.unit = unit
        self.decimal_comma = decimal_comma
        self.scale = scale
        self._cache: dict[Any, Any] = {}

    def parse(self, raw: Any, *, unit: str | None = None) -> Any:
        """Typed value, ``None`` for "no reading", or a :class:`CellProblem`."""
        use_unit = unit or self.unit
        key = (raw, use_unit) if unit else raw
        try:
            hit = self._cache.get(key, _MISS)
        except TypeError:  # unhashable (a JSON list or object): never cached
            return self._compute(raw, use_unit)
        if hit is not _MISS:
            return hit
        value = self._compute(raw, use_unit)
        if len(self._cache) >= _CACHE_LIMIT:
            self._cache.clear()
        self._cache[key] = value
        return value

    def _compute(self, raw: Any, unit: str | None) -> Any:
        try:
            value = coerce_field(self.field, raw, default_unit=unit, decimal_comma=self.decimal_comma)
        except EngineError as exc:
            return CellProblem(exc.message, exc.text if exc.text is not None else _short(raw))
        except (TypeError, ValueError, OverflowError) as exc:
            # defensive: coerce_field documents only ReadingError, but an input
            # we did not foresee must still cost one cell, not the whole input
            return CellProblem(f"{self.field}: {exc}", _short(raw))
        if self.scale != 1.0 and value is not None:
            return scaled(value, self.scale, self.field)
        return value


def scaled(value: Any, scale: float, field: str) -> Any:
    """A number or reading multiplied by a profile's ``scale`` (text and flags unchanged)."""
    if FIELDS[field].kind not in ("reading", "number"):
        return value
    if isinstance(value, Reading):
        if value.value is None:
            return value
        return Reading(value=float(f"{value.value * scale:.12g}"), relation=value.relation,
                       text=value.text, source=value.source)
    if isinstance(value, float):
        return float(f"{value * scale:.12g}")
    return value


def _short(raw: Any) -> str:
    text = raw if isinstance(raw, str) else repr(raw)
    return text if len(text) <= 200 else text[:200] + "…"


_MISS = object()
