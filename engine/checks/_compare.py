"""Comparing a reading, which may be bounded, with a limit.

A reading ``> 999 MΩ`` passes a 1 MΩ minimum; ``> 2000 Ω`` fails a 1.37 Ω
maximum; ``> 0.5 Ω`` against a 1.37 Ω maximum proves nothing either way, and
the caller decides what that means (usually ``investigate``).
"""

from __future__ import annotations

from collections.abc import Mapping
from enum import Enum
from typing import Any

from ..findings import BasisParts, Detail, Finding, found
from ..readings import Reading
from ..results import Outcome
from ..words import words

__all__ = ["Side", "compare_max", "compare_min", "incomplete", "not_applicable_if_none"]


class Side(Enum):
    WITHIN = "within"
    BEYOND = "beyond"
    UNKNOWN = "unknown"  # a bound that does not settle the comparison


def compare_max(reading: Reading, limit: float) -> Side:
    """Is the true value at or below ``limit``?"""
    if reading.relation == ">":
        if reading.value is None or reading.value >= limit:
            return Side.BEYOND
        return Side.UNKNOWN
    assert reading.value is not None
    if reading.value <= limit:
        return Side.WITHIN
    return Side.BEYOND if reading.relation == "=" else Side.UNKNOWN


def compare_min(reading: Reading, limit: float) -> Side:
    """Is the true value at or above ``limit``?"""
    if reading.relation == ">":
        if reading.value is None or reading.value >= limit:
            return Side.WITHIN
        return Side.UNKNOWN
    assert reading.value is not None
    if reading.relation == "<":
        return Side.BEYOND if reading.value <= limit else Side.UNKNOWN
    return Side.WITHIN if reading.value >= limit else Side.BEYOND


def incomplete(check: str, missing: list[str], *, detail: Detail | None = None,
               basis: BasisParts | None = None, inputs: Mapping[str, Any] | None = None) -> Finding:
    """The check applies but the record lacks what it needs: say what."""
    names = list(missing)
    return found(check, Outcome.INCOMPLETE, detail=detail or (lambda: f"needs {words(names)} to decide"),
                 basis=basis, inputs={"missing": names, **(inputs or {})})


def not_applicable_if_none(*values: object) -> bool:
    return all(v is None for v in values)
