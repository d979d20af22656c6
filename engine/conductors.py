"""Conductor resistance from IEC 60228: the table lookup and its temperature corrections.

Invariants:
- The table is data: ``conductors.json`` of the ruleset holds IEC 60228 class 2
  maximum resistances at 20 °C in Ω/km (= mΩ/m) for copper and aluminium. This
  module never holds a figure of its own.
- A cross-section that is not in the table gives ``None``, never an
  interpolated guess: the caller then says ``incomplete`` or uses a method
  that does not need the table.
- Two temperature rules, kept apart on purpose:
  * :func:`resistance_at_test_temp` corrects the 20 °C maxima to the conductor
    temperature at test with IEC 60228 Annex B's own coefficient
    (copper 0.00393 /K, aluminium 0.00403 /K): this is the physics of what a
    meter reads.
  * :func:`operating_ohm_per_m` raises them to the maximum operating temperature
    with the ruleset's contract coefficient (``temperature.alpha_per_k`` = 0.004,
    the 1.20 / 1.28 multipliers), which is what the handbook tables of mV/A/m
    are built from (BS 7671 Appendix 4).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping

from .compiled import MISS, group_memo, remember
from .errors import RulesetError
from .ruleset import Ruleset
from .temperature import resistance_ratio

__all__ = [
    "MATERIALS",
    "alpha_iec60228",
    "area",
    "operating_ohm_per_m",
    "resistance_at_test_temp",
    "resistance_ohm_per_m_20c",
    "table_sizes",
]

MATERIALS: dict[str, str] = {
    "copper": "copper_class2_ohm_per_km",
    "aluminium": "aluminium_class2_ohm_per_km",
}
_ALPHA_KEYS: dict[str, str] = {
    "copper": "alpha_iec60228_copper_per_k",
    "aluminium": "alpha_iec60228_aluminium_per_k",
}


# Parsed tables by the identity of the ruleset's raw mapping, which is kept beside
# its parse so the id cannot be reused while cached. Every circuit asks for the
# same table; parsing it per call was a tenth of verify()'s time (tests/bench).
_PARSED: dict[int, tuple[object, Mapping[float, float]]] = {}


def _table(ruleset: Ruleset, material: str) -> Mapping[float, float]:
    key = MATERIALS.get(material)
    if key is None:
        return {}
    raw = ruleset.get("conductors", key)
    if raw is None:
        return {}
    hit = _PARSED.get(id(raw))
    if hit is not None and hit[0] is raw:
        return hit[1]
    if not isinstance(raw, Mapping):
        raise RulesetError(f"conductors.{key} must map cross-sections to Ω/km", field=f"conductors.{key}")
    try:
        table = {float(size): float(ohm) for size, ohm in raw.items()}
    except (TypeError, ValueError) as exc:
        raise RulesetError(f"conductors.{key}: {exc}", field=f"conductors.{key}") from exc
    if len(_PARSED) >= 64:  # user rulesets come and go; the built-ins are re-parsed once
        _PARSED.clear()
    _PARSED[id(raw)] = (raw, table)
    return table


def area(value: object) -> float | None:
    """A usable cross-section: a positive number, else ``None`` (0 mm² is bad data, not a size)."""
    if isinstance(value, int | float) and not isinstance(value, bool) and value > 0:
        return float(value)
    return None


def table_sizes(ruleset: Ruleset, material: str) -> tuple[float, ...]:
    """The cross-sections (mm²) the ruleset tabulates for ``material``, ascending."""
    return tuple(sorted(_table(ruleset, material)))


def resistance_ohm_per_m_20c(ruleset: Ruleset, material: str, area_mm2: float | None) -> float | None:
    """IEC 60228 maximum resistance at 20 °C, Ω/m; ``None`` when not tabulated."""
    if area_mm2 is None:
        return None
    table = _table(ruleset, material)
    exact = table.get(area_mm2)
    if exact is not None:
        return exact / 1000.0
    for size, ohm_per_km in table.items():
        if math.isclose(size, area_mm2, rel_tol=1e-9, abs_tol=1e-9):
            return ohm_per_km / 1000.0
    return None


def alpha_iec60228(ruleset: Ruleset, material: str) -> float:
    """IEC 60228 Annex B temperature coefficient at 20 °C for ``material``."""
    return float(ruleset.value("temperature", _ALPHA_KEYS.get(material, _ALPHA_KEYS["copper"])))


def resistance_at_test_temp(ruleset: Ruleset, material: str, area_mm2: float | None,
                            test_temp_c: float) -> float | None:
    """Ω/m at the conductor temperature of the test (IEC 60228 Annex B coefficient)."""
    return _kept(ruleset, ("conductors.at_test", material, area_mm2, test_temp_c), _at_test_temp)


def _kept(ruleset: Ruleset, key: tuple[str, str, float | None, float],
          work: Callable[[Ruleset, str, float | None, float], float | None]) -> float | None:
    """``work`` of the key's arguments, a pure look-up kept in the ruleset's group memo (engine.compiled):
    a job asks for the same few sizes at the same temperatures for every circuit."""
    memo = group_memo(ruleset)
    found = memo.get(key, MISS)
    if found is MISS:
        found = remember(memo, key, work(ruleset, key[1], key[2], key[3]))
    ohm: float | None = found
    return ohm


def _at_test_temp(ruleset: Ruleset, material: str, area_mm2: float | None,
                  test_temp_c: float) -> float | None:
    r20 = resistance_ohm_per_m_20c(ruleset, material, area_mm2)
    if r20 is None:
        return None
    return r20 * resistance_ratio(alpha_iec60228(ruleset, material), test_temp_c)


def operating_ohm_per_m(ruleset: Ruleset, material: str, area_mm2: float | None,
                        operating_temp_c: float) -> float | None:
    """Ω/m at the maximum operating temperature (contract α, e.g. × 1.20 at 70 °C)."""
    return _kept(ruleset, ("conductors.operating", material, area_mm2, operating_temp_c), _operating)


def _operating(ruleset: Ruleset, material: str, area_mm2: float | None,
               operating_temp_c: float) -> float | None:
    r20 = resistance_ohm_per_m_20c(ruleset, material, area_mm2)
    if r20 is None:
        return None
    alpha = float(ruleset.value("temperature", "alpha_per_k"))
    return r20 * resistance_ratio(alpha, operating_temp_c)
