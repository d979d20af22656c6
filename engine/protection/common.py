"""Small shared pieces: the ``Missing`` answer, positive-value guard, table rounding.

Invariants:
- Rounding works in :mod:`decimal` on the shortest repr of each float, so
  0.95 × 230 / 100 is 2.185 exactly and rounds half-up to 2.19 as Table 41.3
  prints it (binary floats would give 2.1849999… → 2.18).
- Values too large or not finite are returned unrounded: table rounding only
  means something at table magnitudes, and it must never raise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_DOWN, ROUND_HALF_UP, Decimal, InvalidOperation

__all__ = ["Missing", "decimal_of", "positive", "round_down", "round_half_up"]

_ROUNDABLE_BELOW = 1e12  # far above any impedance or current a table holds


@dataclass(frozen=True, slots=True, kw_only=True)
class Missing:
    """A lookup that could not be made: the fields that would allow it, and why."""

    fields: tuple[str, ...]
    reason: str


_USABLE_FLOOR = 1e-9


def positive(value: float | None) -> float | None:
    """The value if it is a finite number above zero, else ``None`` (a 0 A rating is no rating).

    Values below ``_USABLE_FLOOR`` count as zero too: no rating, residual
    current or voltage is a nanounit, and dividing by a denormal (5e-324 mA,
    found by the property test) overflows to infinity.
    """
    if value is None or not math.isfinite(value) or value < _USABLE_FLOOR:
        return None
    return value


def decimal_of(value: float) -> Decimal:
    return Decimal(repr(float(value)))


def _quantize(value: Decimal, dp: int, mode: str) -> float | None:
    if not value.is_finite() or abs(value) >= _ROUNDABLE_BELOW:
        return None
    try:
        return float(value.quantize(Decimal(1).scaleb(-dp), rounding=mode))
    except InvalidOperation:
        return None


def round_half_up(value: Decimal, dp: int | None) -> float:
    """``value`` rounded half-up to ``dp`` places (``None``: unrounded)."""
    rounded = None if dp is None else _quantize(value, dp, ROUND_HALF_UP)
    return float(value) if rounded is None else rounded


def round_down(value: Decimal, dp: int | None) -> float:
    """``value`` rounded towards zero to ``dp`` places (``None``: unrounded)."""
    rounded = None if dp is None else _quantize(value, dp, ROUND_DOWN)
    return float(value) if rounded is None else rounded
