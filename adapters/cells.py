"""Cell text → typed field value, with a bounded cache per (field, unit, decimal).

Invariants:
- The value is exactly what the engine's rule gives for the same text, unit
  and decimal convention (:func:`engine.coerce.coerce_spec` on the field's
  spec: :data:`engine.FIELDS` for a circuit, :data:`engine.SITE_FIELDS` for a
  board or the installation); the cache only saves repeating the work. Meters
  print few distinct values (0.82, 0.83 …), so a million rows cost dictionary
  look-ups for most cells.
- A cell word is asked about first (:func:`engine.cell_mark`): ``N/A`` and
  ``LIM`` give a :class:`CellMark`, never ``None`` and never an error, so the
  record remembers the mark instead of taking a default.
- Trade notation (``device``, ``cable``, ``rcd``: :data:`NOTATION_INPUTS`) is
  read by :func:`engine.notation.parse_notation` with the line's decimal
  convention and handed on as text for :func:`engine.build_record` to read
  again: a readable notation as written (decimal commas as points, as the
  engine keeps it, so it reads back without the declaration), a cell word as
  written. An unreadable one is a :class:`CellProblem` (``bad_notation``)
  naming the split fields it stood for, which are remembered as refused.
- Typed values are immutable (frozen :class:`engine.Reading`, float, str, bool),
  so a cached value is safely shared between fragments.
- A bad cell gives a :class:`CellProblem` (reason, text), never an exception.
- The cache is bounded (cleared when full), so memory stays constant in the
  size of the input.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from engine import FIELDS, SITE_FIELDS, EngineError, FieldSpec, MarkedCell, Reading, cell_mark
from engine.coerce import coerce_spec
from engine.marks import is_blank
from engine.notation import parse_notation
from engine.record_notation import NOTATION_INPUTS, NOTATION_SPLIT

__all__ = ["NOTATION_INPUTS", "CellMark", "CellParser", "CellProblem", "field_spec", "scaled"]

_CACHE_LIMIT = 8192


@dataclass(frozen=True, slots=True)
class CellProblem:
    reason: str
    text: str | None
    code: str = "bad_value"
    covers: tuple[str, ...] = ()  # a refused notation: the split fields it stood for


@dataclass(frozen=True, slots=True)
class CellMark:
    """``N/A`` (the test does not apply) or ``LIM`` (a limitation: not tested), as the cell wrote it."""

    mark: str  # "N/A" | "LIM"
    text: str


def field_spec(scope: str, name: str) -> FieldSpec | None:
    """The spec of ``name`` in a scope: ``circuit`` (FIELDS), ``board`` or ``installation``."""
    if scope == "circuit":
        return FIELDS.get(name)
    table = SITE_FIELDS.get(scope)
    return None if table is None else table.get(name)


class CellParser:
    """Parses the cells of one column (one field of one scope, one header unit, one scale)."""

    __slots__ = ("_cache", "decimal_comma", "field", "scale", "spec", "unit")

    def __init__(self, field: str, *, unit: str | None = None, decimal_comma: bool = False,
                 scale: float = 1.0, scope: str = "circuit") -> None:
        self.field = field
        self.unit = unit
        self.decimal_comma = decimal_comma
        self.scale = scale
        self.spec = None if field in NOTATION_INPUTS and scope == "circuit" else field_spec(scope, field)
        if self.spec is None and not (field in NOTATION_INPUTS and scope == "circuit"):
            raise ValueError(f"{field!r} is not a {scope} field")
        self._cache: dict[Any, Any] = {}

    def parse(self, raw: Any, *, unit: str | None = None) -> Any:
        """Typed value, ``None`` for "no reading", a :class:`CellMark` or a :class:`CellProblem`."""
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
        mark = cell_mark(raw)
        if self.spec is None:
            return self._notation(raw, mark is not None)
        if mark is not None:
            return CellMark(mark, str(raw).strip())
        try:
            value = coerce_spec(self.spec, raw, default_unit=unit, decimal_comma=self.decimal_comma)
        except MarkedCell as exc:  # a cell word cell_mark does not know yet: still remembered
            return CellMark(exc.mark, str(raw).strip())
        except EngineError as exc:
            return CellProblem(exc.message, exc.text if exc.text is not None else _short(raw))
        except (TypeError, ValueError, OverflowError) as exc:
            # defensive: coerce_spec documents only ReadingError, but an input
            # we did not foresee must still cost one cell, not the whole input
            return CellProblem(f"{self.field}: {exc}", _short(raw))
        if self.scale != 1.0 and value is not None:
            return scaled(value, self.scale, self.spec)
        return value

    def _notation(self, raw: Any, marked: bool) -> Any:
        """A notation input's text as the engine will read it, or why it cannot be read."""
        if is_blank(raw):
            return None
        if marked:
            return str(raw).strip()
        try:
            found = parse_notation(self.field, raw, decimal_comma=self.decimal_comma)
        except EngineError as exc:
            return CellProblem(exc.message, exc.text if exc.text is not None else _short(raw),
                               code="bad_notation", covers=NOTATION_SPLIT[self.field])
        if found is None:
            return None
        text = str(raw).strip()
        return text.replace(",", ".") if self.decimal_comma else text


def scaled(value: Any, scale: float, spec: FieldSpec | str) -> Any:
    """A number or reading multiplied by a profile's ``scale`` (text and flags unchanged)."""
    kind = (FIELDS[spec] if isinstance(spec, str) else spec).kind
    if kind not in ("reading", "number"):
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
