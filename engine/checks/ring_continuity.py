"""Ring final circuit continuity: end-to-end and cross-connected readings agree.

Applies only to ``circuit_form = ring``. Three comparisons, each its own result
(IET GN3 / OSG ring final circuit test, BS 7671 Reg. 643.2.1; the ±5 % band is
common practice; figures in ``ring_continuity.json``):

1. ``r1_vs_rn``: end-to-end line and neutral within 0.05 Ω of each other.
2. ``r2_vs_r1``: end-to-end cpc within the larger of ±5 % and 0.05 Ω of
   r1 × (r_cpc / r_line). The ratio is that of the conductors' IEC 60228
   resistances where both sizes are tabulated (2.5/1.5 → 1.633), else the
   area ratio A_line / A_cpc (2.5/1.5 → 1.667); which one is reported.
3. ``cross_connected``: R1+R2 (the highest reading with line and cpc
   cross-connected) within 0.05 Ω of (r1 + r2)/4.

Outcomes, decided per case:
- An end-to-end reading over range (``OL`` or ``>``) is ``fail``: the ring is
  open, so its cable (sized on the ring sharing the load) is overloaded as two
  radials, and the open conductor may be the cpc.
- A disagreement beyond tolerance is ``investigate``: it points to a loose or
  high-resistance joint, a conductor of another size, a spur (R1+R2 high) or an
  interconnection (R1+R2 low), which the person on site must resolve; none is
  by itself a breach of a numerical limit.
- Bounded readings (``<``) are compared by their bounds; if the bounds do not
  settle a comparison it is ``investigate``.
- A missing reading makes each comparison that needs it ``incomplete``.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from ..compiled import basis, derived
from ..conductors import area, resistance_ohm_per_m_20c
from ..context import CircuitView, Context
from ..findings import Basis, Detail, Finding, found, render
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import incomplete

__all__ = ["cpc_to_line_ratio", "run"]

CHECK = "ring_continuity"
SECTION = "ring_continuity"
_NAMES = {"ring_r1_ohm": "r1", "ring_rn_ohm": "rn", "ring_r2_ohm": "r2"}


@dataclass(frozen=True, slots=True)
class _R2Rule:
    fraction: float
    floor: float
    basis: Basis


@dataclass(frozen=True, slots=True)
class _CrossRule:
    tolerance: float
    divisor: float
    basis: Basis


def _end_to_end(rules: Ruleset) -> float:
    return float(rules.value(SECTION, "end_to_end_tolerance_ohm"))


def _r2_rule(rules: Ruleset) -> _R2Rule:
    return _R2Rule(fraction=float(rules.value(SECTION, "r2_ratio_tolerance_fraction")),
                   floor=float(rules.value(SECTION, "r2_tolerance_ohm")),
                   basis=basis(rules, SECTION, "r2_ratio_tolerance_fraction"))


def _cross_rule(rules: Ruleset) -> _CrossRule:
    return _CrossRule(tolerance=float(rules.value(SECTION, "cross_connected_tolerance_ohm")),
                      divisor=float(rules.value(SECTION, "mid_point_divisor")),
                      basis=basis(rules, SECTION, "cross_connected_tolerance_ohm"))


def cpc_to_line_ratio(view: CircuitView) -> tuple[float, str] | None:
    """r_cpc / r_line: IEC 60228 resistance ratio if tabulated, else the area ratio."""
    read = view.read
    line, cpc = area(read.line_mm2), area(read.cpc_mm2)
    if line is None or cpc is None:
        return None
    material = str(view.get("conductor_material"))
    r_line = resistance_ohm_per_m_20c(view.ruleset, material, line)
    r_cpc = resistance_ohm_per_m_20c(view.ruleset, material, cpc)
    if r_line and r_cpc:
        return r_cpc / r_line, "iec60228_resistance"
    return line / cpc, "area"


def _bounds(reading: Reading) -> tuple[float, float]:
    return reading.lower, reading.upper


def _difference(a: tuple[float, float], b: tuple[float, float]) -> tuple[float, float]:
    """Least and most |x − y| for x in a, y in b."""
    least = max(0.0, a[0] - b[1], b[0] - a[1])
    most = max(abs(a[1] - b[0]), abs(b[1] - a[0]))
    return least, most


def _compare(method: str, what: Detail, measured: tuple[float, float], expected: tuple[float, float],
             tolerance: float, rule: Basis, inputs: dict[str, Any], hint: str) -> Finding:
    least, most = _difference(measured, expected)
    exact = math.isfinite(most) and least == most
    value = least if exact else None
    if most <= tolerance:
        outcome = Outcome.PASS
        detail = lambda: f"{render(what)}: difference {most:.3g} Ω, within {tolerance:.3g} Ω"  # noqa: E731
    elif least > tolerance:
        outcome = Outcome.INVESTIGATE
        detail = lambda: f"{render(what)}: difference {least:.3g} Ω, beyond {tolerance:.3g} Ω; {hint}"  # noqa: E731
    else:
        outcome = Outcome.INVESTIGATE
        detail = lambda: (f"{render(what)}: bounded readings do not show the difference is within "  # noqa: E731
                          f"{tolerance:.3g} Ω")
    return found(CHECK, outcome, value=value, relation="=" if exact else ">", limit=tolerance,
                 limit_kind="max", unit="Ω", method=method, basis=rule, detail=detail, inputs=inputs)


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    if view.get("circuit_form") != "ring":
        return
    rules = ctx.ruleset
    end_to_end = basis(rules, SECTION, "end_to_end_tolerance_ohm")
    read = view.read
    readings = {"ring_r1_ohm": read.ring_r1_ohm, "ring_rn_ohm": read.ring_rn_ohm,
                "ring_r2_ohm": read.ring_r2_ohm}
    open_ = [_NAMES[f] for f, r in readings.items() if r is not None and r.relation == ">"]
    if open_:
        yield found(CHECK, Outcome.FAIL, method="end_to_end_open", basis=end_to_end, inputs={"open": open_},
                    detail=lambda: f"end-to-end {', '.join(open_)} over range: the ring is open, so it "
                                   "runs as two radials on cable sized for a ring")
    usable = {f: r for f, r in readings.items() if r is not None and r.relation != ">"}
    r1, rn, r2 = (usable.get(f) for f in _NAMES)
    missing = [f for f, r in readings.items() if r is None]

    if r1 is not None and rn is not None:
        yield _compare("r1_vs_rn", "end-to-end r1 vs rn", _bounds(r1), _bounds(rn),
                       derived(rules, _end_to_end), end_to_end,
                       {"ring_r1_ohm": r1.value, "ring_rn_ohm": rn.value},
                       "look for a loose or high-resistance joint, or a neutral of another size")
    elif missing and {"ring_r1_ohm", "ring_rn_ohm"} & set(missing):
        yield incomplete(CHECK, [f for f in ("ring_r1_ohm", "ring_rn_ohm") if f in missing],
                         detail="needs end-to-end r1 and rn to show the ring's live conductors are "
                                "continuous", basis=end_to_end)

    if r1 is not None and r2 is not None:
        ratio = cpc_to_line_ratio(view)
        if ratio is None:
            yield incomplete(CHECK, ["line_mm2", "cpc_mm2"], basis=end_to_end,
                             detail="needs the line size and cpc size to compare r2 with r1")
        else:
            factor, how = ratio
            lo, hi = _bounds(r1)
            expected = (lo * factor, hi * factor)
            rule = derived(rules, _r2_rule)
            tol = max(rule.fraction * expected[1], rule.floor)
            yield _compare("r2_vs_r1", lambda: f"end-to-end r2 vs r1 × {factor:.4g}", _bounds(r2), expected,
                           tol, rule.basis,
                           {"ring_r1_ohm": r1.value, "ring_r2_ohm": r2.value, "ratio": factor,
                            "ratio_basis": how, "expected_r2_ohm": expected[1]},
                           "the cpc is not the size recorded, or has a poor joint")
    elif "ring_r2_ohm" in missing:
        yield incomplete(CHECK, ["ring_r2_ohm"], basis=end_to_end,
                         detail="needs end-to-end r2 to show the ring's cpc is continuous")

    r1r2 = read.r1_r2_ohm
    if r1 is not None and r2 is not None:
        cross = derived(rules, _cross_rule)
        if r1r2 is None:
            yield incomplete(CHECK, ["r1_r2_ohm"], basis=end_to_end,
                             detail="needs R1+R2 (line and cpc cross-connected) to compare with "
                                    "(r1 + r2)/4")
        else:
            mid = ((r1.lower + r2.lower) / cross.divisor, (r1.upper + r2.upper) / cross.divisor)
            yield _compare("cross_connected", "R1+R2 vs (r1 + r2)/4", _bounds(r1r2), mid, cross.tolerance,
                           cross.basis, {"r1_r2_ohm": r1r2.value, "expected_ohm": mid[1]},
                           "higher suggests a spur or a poor connection at an outlet, lower an "
                           "interconnection or a parallel path")
