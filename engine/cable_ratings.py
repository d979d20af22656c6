"""Current-carrying capacity Iz from the ruleset's tables, for what a record says about its cable.

Invariants:
- The tables are data (the ruleset's ``overload`` section): copper, reference
  conditions, keyed cable type → maximum conductor temperature → loaded
  conductors → reference method → size → A. This module holds no figure.
- Where the record leaves the cable type or the reference method out, every
  table entry that fits the rest is a candidate: :class:`Candidates` gives the
  least and the most of them, so a check can pass what holds for the least,
  fail what exceeds the most, and name what is missing in between. Nothing is
  interpolated: a size, temperature or material no table holds gives no
  candidate at all.
- IEC methods A1/A2 and B1/B2 are read as Appendix 4's A and B (the ruleset's
  ``method_aliases``); the cable type tells them apart.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from .readings import format_number
from .ruleset import Ruleset

__all__ = ["CABLE_TABLES", "Candidates", "iz_candidates"]

SECTION = "overload"
#: cable_type → the ruleset key of its table
CABLE_TABLES: dict[str, str] = {
    "twin_and_earth": "iz_twin_and_earth_a",
    "single_core": "iz_single_core_a",
    "multicore": "iz_multicore_a",
}


@dataclass(frozen=True, slots=True, kw_only=True)
class Candidates:
    """The tabulated Iz values (A) that fit the record, before correction factors."""

    values: tuple[tuple[float, str], ...]  # (Iz, "cable, method") each
    basis: str
    unknown: tuple[str, ...]  # the record's fields whose absence widened the choice

    @property
    def least(self) -> tuple[float, str]:
        return min(self.values)

    @property
    def most(self) -> tuple[float, str]:
        return max(self.values)

    @property
    def exact(self) -> bool:
        return len(self.values) == 1


def _methods(rules: Ruleset, method: str | None) -> str | None:
    if method is None:
        return None
    aliases: dict[str, str] = rules.get(SECTION, "method_aliases", {}) or {}
    return aliases.get(method, method)


def iz_candidates(rules: Ruleset, *, cable_type: str | None, method: str | None, insulation_c: float,
                  loaded: int, line_mm2: float, material: str) -> Candidates | None:
    """Every tabulated Iz that fits, or ``None`` where no table holds the cable described."""
    if material != "copper":
        return None
    wanted = _methods(rules, method)
    size = format_number(line_mm2)
    temp = format_number(insulation_c)
    found: list[tuple[float, str]] = []
    sources: list[str] = []
    types = (cable_type,) if cable_type is not None else tuple(CABLE_TABLES)
    for kind in types:
        key = CABLE_TABLES.get(kind)
        if key is None or not rules.has(SECTION, key):
            continue
        table: dict[str, Any] = rules.value(SECTION, key)
        by_method: dict[str, dict[str, float]] = table.get(temp, {}).get(str(loaded), {})
        for name, sizes in by_method.items():
            if wanted is not None and name != wanted:
                continue
            if size in sizes:
                found.append((float(sizes[size]), f"{kind.replace('_', ' ')}, method {name}"))
                if rules.basis(SECTION, key) not in sources:
                    sources.append(rules.basis(SECTION, key))
    if not found:
        return None
    unknown = tuple(name for name, value in (("cable_type", cable_type), ("reference_method", method))
                    if value is None)
    return Candidates(values=tuple(found), basis="; ".join(sources), unknown=unknown)
