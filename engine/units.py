"""Unit tokens → factors to each field's canonical unit, resolved through pint.

Invariants:
- A unit token is resolved once per (token, canonical unit) and cached, so a row
  of readings costs dictionary look-ups, not library calls.
- A token whose dimension does not match the field's canonical unit raises
  :class:`UnitMismatch`; nothing is converted silently across dimensions.
- pint is imported lazily, on the first token that is not already cached, so
  importing :mod:`engine` stays cheap.
"""

from __future__ import annotations

import re
from functools import lru_cache
from typing import Any

__all__ = ["UnitMismatch", "UnknownUnit", "canonical_token", "unit_factor"]


class UnknownUnit(ValueError):
    """The token names no unit pint knows."""


class UnitMismatch(ValueError):
    """The token is a unit, but of another dimension than the field's."""


# Spellings meters and spreadsheets use that pint does not read as they mean.
# Case is kept everywhere else: mΩ and MΩ differ by 10⁹.
_SPELLINGS: tuple[tuple[re.Pattern[str], str], ...] = (
    (re.compile(r"[ΩΩ]"), "ohm"),
    (re.compile(r"(?i)ohms?\b"), "ohm"),
    (re.compile(r"^K(?=ohm$)"), "k"),  # "KΩ" on many meter displays means kilo-ohm
    (re.compile(r"^u(?=(ohm|A|V|s)$)"), "µ"),
    (re.compile(r"(?i)mm(2|²|\^2)|sq\.?\s*mm"), "mm**2"),
    (re.compile(r"(?i)^(sec|secs)$"), "s"),
    (re.compile(r"(?i)^msec$"), "ms"),
    (re.compile(r"(?i)^deg\s*c$|^°\s*c$|^c$"), "degC"),
)


def canonical_token(token: str) -> str:
    """Rewrite a meter's spelling of a unit into one pint reads."""
    out = token.strip()
    for pattern, replacement in _SPELLINGS:
        out = pattern.sub(replacement, out)
    return out.replace(" ", "")


_registry: Any = None


def _ureg() -> Any:
    global _registry
    if _registry is None:
        # Measured start-up cost: pint takes ~100 ms to import here (python -X importtime), more
        # than the rest of the engine (~55 ms). It is loaded on the first reading that carries a
        # unit (each token is then cached), so records of bare numbers never pay for it.
        import pint

        _registry = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return _registry


@lru_cache(maxsize=512)
def unit_factor(token: str, canonical: str) -> float:
    """Factor that turns a value in ``token`` into ``canonical`` units.

    ``canonical`` is a pint unit expression such as ``"ohm"``, ``"megaohm"``,
    ``"kA"``, ``"ms"``. Temperatures are handled by the caller (offset units).
    """
    ureg = _ureg()
    spelled = canonical_token(token)
    try:
        unit = ureg.parse_units(spelled)
    except Exception as exc:  # pint raises several types; all mean "not a unit"
        raise UnknownUnit(f"unknown unit {token!r}") from exc
    target = ureg.parse_units(canonical)
    if unit.dimensionality != target.dimensionality:
        raise UnitMismatch(f"unit {token!r} does not fit a value in {canonical}")
    return float(ureg.Quantity(1.0, unit).to(target).magnitude)
