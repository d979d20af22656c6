"""Maximum earth fault loop impedance for a device at a required disconnection time.

Invariants:
- Breakers and RCBOs: Zs = factor × U0 / (k × In), k from ``breakers.ia_multiple``
  for the tabulated time used, rounded as the ruleset says (BS 7671 Table 41.3:
  2 dp half-up; IEC 60364: unrounded, factor 1).
- Fuses: literal tables (Tables 41.2 / 41.4), scaled by U0 / the table's U0
  (Ia is fixed by the fuse's curve, so Zs is proportional to U0). A rating
  not in the table is missing, never interpolated.
- The tabulated time used is the longest one not above the required time
  (conservative: a shorter time means a lower Zs). Below the shortest column
  a breaker still qualifies down to ``breakers.instantaneous_within_s``; a
  fuse does not.
- A table cell the ruleset marks doubtful (``doubtful_ratings_a``) is returned
  with the doubt attached: a check may fail a Zs above it, never pass one below.
- ``device_max_zs_ohm`` is applied by the check, which lets it tighten the
  tables, never loosen them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..readings import format_number
from ..ruleset import Ruleset
from .common import Missing, decimal_of, positive, round_down, round_half_up
from .devices import Device

__all__ = ["MaxZs", "breaker_max_zs", "fuse_max_zs", "fuse_tables", "max_zs_for", "rule_of_thumb_limit"]


@dataclass(frozen=True, slots=True, kw_only=True)
class MaxZs:
    ohm: float
    basis: str
    device: str
    table_s: float | None = None
    formula: str | None = None
    doubtful: str | None = None  # why the tabulated value is in doubt: it may fail, never pass
    basis_id: str | None = None  # the ruleset entry ``basis`` begins with, or ``record:device_max_zs_ohm``


def _column(times: list[float], required_s: float, floor_s: float | None) -> float | None:
    usable = [t for t in times if t <= required_s]
    if usable:
        return max(usable)
    if floor_s is not None and required_s >= floor_s:
        return min(times)
    return None


def breaker_max_zs(rules: Ruleset, curve: str, rating_a: float, u0_v: float,
                   required_s: float) -> MaxZs | Missing:
    """Zs max for a B/C/D breaker or RCBO of ``rating_a`` at ``u0_v`` within ``required_s``."""
    multiples: dict[str, dict[str, float]] = rules.value("breakers", "ia_multiple")
    floor = rules.get("breakers", "instantaneous_within_s")
    column = _column([float(t) for t in multiples], required_s, floor)
    if column is None:
        return Missing(fields=("device_max_zs_ohm",),
                       reason=f"no breaker value serves a {required_s:g} s disconnection time")
    key = next(k for k in multiples if float(k) == column)
    k = multiples[key].get(curve)
    if k is None or positive(rating_a) is None or positive(u0_v) is None:
        return Missing(fields=("device_curve", "device_rating_a"),
                       reason=f"no Ia multiple for curve {curve!r}")
    factor = float(rules.value("max_zs", "voltage_factor"))
    exact = decimal_of(factor) * decimal_of(u0_v) / (decimal_of(k) * decimal_of(rating_a))
    ohm = round_half_up(exact, rules.get("max_zs", "rounding_dp"))
    basis = (f"{rules.basis('max_zs', 'voltage_factor')}; Ia = {k:g} × In "
             f"({rules.basis('breakers', 'ia_multiple')})")
    formula = f"{factor:g} × {u0_v:g} / ({k:g} × {rating_a:g})"
    return MaxZs(ohm=ohm, basis=basis, device=f"{curve}{rating_a:g}", table_s=column, formula=formula,
                 basis_id="max_zs.voltage_factor")


def fuse_tables(rules: Ruleset, standard: str) -> list[tuple[float, dict[str, Any], str]]:
    """(seconds, table, source) of every Zs table the ruleset holds for fuses to ``standard``."""
    return [(seconds, table, source) for seconds, table, source, _ in _fuse_tables(rules, standard)]


def _fuse_tables(rules: Ruleset, standard: str) -> list[tuple[float, dict[str, Any], str, str]]:
    out = []
    for key, entry in rules.sections.get("fuses", {}).items():
        value = entry.value
        if isinstance(value, dict) and value.get("standard") == standard and "ohm_by_rating_a" in value:
            out.append((float(value["seconds"]), value, entry.source, f"fuses.{key}"))
    return out


def fuse_max_zs(rules: Ruleset, standard: str, rating_a: float, u0_v: float,
                required_s: float) -> MaxZs | Missing:
    """Zs max for a fuse from the ruleset's literal tables."""
    tables = _fuse_tables(rules, standard)
    if not tables:
        return Missing(fields=("device_max_zs_ohm",), reason=f"no Zs table for fuses to {standard}")
    column = _column([t for t, _, _, _ in tables], required_s, None)
    if column is None:
        return Missing(fields=("device_max_zs_ohm",),
                       reason=f"the {standard} tables start at {min(t for t, _, _, _ in tables):g} s; "
                              f"{required_s:g} s needs the maker's figure")
    _, table, source, entry_id = next(item for item in tables if item[0] == column)
    listed = table["ohm_by_rating_a"].get(format_number(rating_a))
    if listed is None or positive(u0_v) is None:
        return Missing(fields=("device_max_zs_ohm",),
                       reason=f"{standard} has no tabulated {rating_a:g} A rating at {column:g} s")
    table_u0 = float(table["u0_v"])
    ohm = float(listed) if u0_v == table_u0 else float(
        decimal_of(listed) * decimal_of(u0_v) / decimal_of(table_u0))
    formula = None if u0_v == table_u0 else f"{listed} × {u0_v:g} / {table_u0:g}"
    doubt = (table.get("doubtful_ratings_a") or {}).get(format_number(rating_a))
    return MaxZs(ohm=ohm, basis=source, device=f"{standard} {rating_a:g} A", table_s=column,
                 formula=formula, doubtful=doubt, basis_id=entry_id)


def max_zs_for(rules: Ruleset, device: Device, u0_v: float, required_s: float) -> MaxZs | Missing:
    if device.kind == "breaker":
        assert device.curve is not None
        return breaker_max_zs(rules, device.curve, device.rating_a, u0_v, required_s)
    assert device.standard is not None
    return fuse_max_zs(rules, device.standard, device.rating_a, u0_v, required_s)


def rule_of_thumb_limit(rules: Ruleset, max_ohm: float) -> float:
    """The ruleset's factor × max, rounded down as the trade tables print it (0.8 × 0.91 = 0.728 → 0.72)."""
    factor = float(rules.value("max_zs", "rule_of_thumb_factor"))
    return round_down(decimal_of(factor) * decimal_of(max_ohm),
                      rules.get("max_zs", "rule_of_thumb_round_down_dp"))
