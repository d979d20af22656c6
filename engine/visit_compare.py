"""One circuit's readings against the same circuit's at the previous visit: what changed, and by how much.

The rules (figures in the ruleset's ``previous_visit`` section, each with its basis):

- **Insulation resistance** (``ir_ll_mohm``, ``ir_le_mohm``) needs a look when it
  fell by more than ``insulation_fall_factor`` *and* is now below
  ``insulation_level_mohm``: the reading beyond which it needs a look is
  ``min(level, previous / factor)``, a lower limit.
- **R1+R2, R2, ring end-to-end readings** rise by more than ``rise_fraction`` of
  the previous reading *and* by more than ``continuity_margin_ohm``; **Zs** the
  same with ``loop_margin_ohm``: the limit is ``previous + max(fraction ×
  previous, margin)``, an upper limit.
- **Ze** (the circuit's effective Ze: its own reading, its board's Zdb or the
  origin's Ze) changing either way by more than ``ze_change_fraction`` and
  ``loop_margin_ohm``: the supply or the earthing may have changed.
- **RCD times** (``rcd_trip_ms``, ``rcd_trip_5x_ms``) lengthening by more than
  ``rcd_slower_fraction`` and ``rcd_margin_ms``.
- **A device or cable that changed**: any of :data:`EQUIPMENT` recorded on both
  visits with different values.

Invariants:
- "More than": a change exactly at a threshold does not need a look (compared
  with a relative slack of 1e-9, so a threshold is not crossed by float noise).
- Bounded readings are intervals (``> 999 MΩ`` is at least 999; ``OL`` is above
  any figure, as :func:`engine.checks._compare.compare_min` reads it). A change is
  said to need a look only when every value the bounds allow needs one, and not
  to need one only when none does; otherwise ``needs_look`` is ``None`` (a bound
  settles nothing).
- A field is compared only where both visits record a usable value: a value
  withheld (refused, marked, impossible) on either visit is not compared; the
  current visit's own checks say why.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

from .fields import FIELDS
from .plausibility import Withheld
from .readings import Reading
from .results import round_figure
from .ruleset import Ruleset

__all__ = ["CONTINUITY", "EQUIPMENT", "FALLING", "LOOP", "RCD_TIMES", "SECTION", "SUPPLY", "FieldChange",
           "compare_circuit", "reading_dict"]

SECTION = "previous_visit"
FALLING: tuple[str, ...] = ("ir_ll_mohm", "ir_le_mohm")
CONTINUITY: tuple[str, ...] = ("r1_r2_ohm", "r2_ohm", "ring_r1_ohm", "ring_rn_ohm", "ring_r2_ohm")
LOOP: tuple[str, ...] = ("zs_ohm",)
SUPPLY: tuple[str, ...] = ("ze_ohm",)
RCD_TIMES: tuple[str, ...] = ("rcd_trip_ms", "rcd_trip_5x_ms")
EQUIPMENT: tuple[str, ...] = ("device_kind", "device_standard", "device_curve", "device_rating_a",
                              "device_breaking_ka", "rcd_residual_ma", "rcd_type", "rcd_delayed",
                              "conductor_material", "cable_type", "line_mm2", "cpc_mm2", "insulation_temp_c")
_SLACK = 1e-9

Rule = Literal["fall", "rise", "either", "changed"]
Reader = Callable[[str], Any]


@dataclass(frozen=True, slots=True, kw_only=True)
class FieldChange:
    """One field compared across two visits."""

    field: str
    rule: Rule
    previous: Any
    current: Any
    change: float | None
    """current − previous, where both are exact figures."""
    fraction: float | None
    """change / previous, where both are exact figures and the previous is not zero."""
    limit: float | None
    """The current reading beyond which the change needs a look (``None`` for a changed device or cable)."""
    limit_kind: Literal["max", "min"] | None
    needs_look: bool | None
    """True: changed beyond the thresholds; False: within them; None: a bound settles nothing."""
    threshold_keys: tuple[str, ...]
    """The ruleset entries (of ``previous_visit``) the thresholds come from."""

    @property
    def unit(self) -> str | None:
        return FIELDS[self.field].symbol

    def as_dict(self) -> dict[str, Any]:
        return {"field": self.field, "rule": self.rule, "previous": reading_dict(self.previous, self.unit),
                "current": reading_dict(self.current, self.unit), "change": round_figure(self.change),
                "fraction": round_figure(self.fraction), "limit": round_figure(self.limit),
                "limit_kind": self.limit_kind,
                "unit": self.unit, "needs_look": self.needs_look}


def reading_dict(value: Any, unit: str | None) -> dict[str, Any]:
    """``{"value", "relation", "unit"}`` of a reading; a design value or choice as ``{"value", ...}``."""
    if isinstance(value, Reading):
        return {"value": value.value, "relation": value.relation, "unit": unit}
    return {"value": value, "relation": "=", "unit": unit}


def _above(value: float, limit: float) -> bool:
    return value > limit + _SLACK * max(1.0, abs(limit))


def _low(reading: Reading) -> float:
    """The least the true value can be; over range (``OL``) is above any figure."""
    if reading.value is None:
        return math.inf
    return 0.0 if reading.relation == "<" else reading.value


def _high(reading: Reading) -> float:
    return math.inf if reading.relation == ">" or reading.value is None else reading.value


def _exact_change(previous: Reading, current: Reading) -> tuple[float | None, float | None]:
    if not (previous.exact and current.exact):
        return None, None
    assert previous.value is not None and current.value is not None
    change = current.value - previous.value
    return change, (change / previous.value if previous.value else None)


def _three(beyond: bool, within: bool) -> bool | None:
    return True if beyond else (False if within else None)


def _fall(name: str, previous: Reading, current: Reading, rules: Ruleset) -> FieldChange:
    factor = float(rules.value(SECTION, "insulation_fall_factor"))
    level = float(rules.value(SECTION, "insulation_level_mohm"))
    # needs a look below min(level, previous / factor); the previous bounds give the limit's bounds
    strict = min(level, _low(previous) / factor)
    loose = min(level, _high(previous) / factor)
    beyond = _above(strict, _high(current))  # every allowed current value is below every allowed limit
    within = not _above(loose, _low(current))
    change, fraction = _exact_change(previous, current)
    limit = loose if previous.exact else strict
    return FieldChange(field=name, rule="fall", previous=previous, current=current, change=change,
                       fraction=fraction, limit=limit if math.isfinite(limit) else None, limit_kind="min",
                       needs_look=_three(beyond, within),
                       threshold_keys=("insulation_fall_factor", "insulation_level_mohm"))


def _rise(name: str, previous: Reading, current: Reading, rules: Ruleset, fraction_key: str,
          margin_key: str) -> FieldChange:
    fraction = float(rules.value(SECTION, fraction_key))
    margin = float(rules.value(SECTION, margin_key))

    def limit_at(prev: float) -> float:
        return prev + max(fraction * prev, margin)

    strict, loose = limit_at(_low(previous)), limit_at(_high(previous))
    beyond = _above(_low(current), loose)
    within = not _above(_high(current), strict)
    change, rise = _exact_change(previous, current)
    limit = strict
    return FieldChange(field=name, rule="rise", previous=previous, current=current, change=change,
                       fraction=rise, limit=limit if math.isfinite(limit) else None, limit_kind="max",
                       needs_look=_three(beyond, within), threshold_keys=(fraction_key, margin_key))


def _either(name: str, previous: Reading, current: Reading, rules: Ruleset) -> FieldChange:
    fraction = float(rules.value(SECTION, "ze_change_fraction"))
    margin = float(rules.value(SECTION, "loop_margin_ohm"))
    change, share = _exact_change(previous, current)
    keys = ("ze_change_fraction", "loop_margin_ohm")
    if change is None:  # a bounded Ze either way settles nothing about a change in both directions
        return FieldChange(field=name, rule="either", previous=previous, current=current, change=None,
                           fraction=None, limit=None, limit_kind=None, needs_look=None, threshold_keys=keys)
    assert previous.value is not None
    allowed = max(fraction * previous.value, margin)
    return FieldChange(field=name, rule="either", previous=previous, current=current, change=change,
                       fraction=share, limit=previous.value + allowed, limit_kind="max",
                       needs_look=_above(abs(change), allowed), threshold_keys=keys)


def _equipment(name: str, previous: Any, current: Any) -> FieldChange:
    return FieldChange(field=name, rule="changed", previous=previous, current=current, change=None,
                       fraction=None, limit=None, limit_kind=None, needs_look=previous != current,
                       threshold_keys=())


def _usable(read: Reader, name: str) -> Any:
    try:
        return read(name)
    except Withheld:
        return None


def compare_circuit(current: Reader, previous: Reader, rules: Ruleset) -> list[FieldChange]:
    """Every field both visits record usably, compared (in the order of the rules above).

    ``current`` and ``previous`` read a field's effective value (a view's ``raw``):
    they may raise :class:`engine.plausibility.Withheld`, and that field is then not compared.
    """
    out: list[FieldChange] = []
    for group, judge in ((FALLING, "fall"), (CONTINUITY, "continuity"), (LOOP, "loop"), (SUPPLY, "either"),
                         (RCD_TIMES, "rcd")):
        for name in group:
            then, now = _usable(previous, name), _usable(current, name)
            if not isinstance(then, Reading) or not isinstance(now, Reading):
                continue
            if judge == "fall":
                out.append(_fall(name, then, now, rules))
            elif judge == "either":
                out.append(_either(name, then, now, rules))
            elif judge == "continuity":
                out.append(_rise(name, then, now, rules, "rise_fraction", "continuity_margin_ohm"))
            elif judge == "loop":
                out.append(_rise(name, then, now, rules, "rise_fraction", "loop_margin_ohm"))
            else:
                out.append(_rise(name, then, now, rules, "rcd_slower_fraction", "rcd_margin_ms"))
    for name in EQUIPMENT:
        then, now = _usable(previous, name), _usable(current, name)
        if then is not None and now is not None:
            out.append(_equipment(name, then, now))
    return out
