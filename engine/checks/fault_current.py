"""Prospective fault current against the device's rated short-circuit capacity (434.5.1 / 536.4).

Invariants:
- Applies where ``pfc_ka`` is recorded. PFC ≤ ``device_breaking_ka`` → pass.
- Above it → fail, except where the ruleset has a conditional rating for
  consumer units (BS EN 61439-3 Annex ZB, 16 kA, a UK deviation) and the PFC is
  within it on a single-phase circuit: then ``investigate``. The record cannot
  show Annex ZB's conditions (a consumer unit for ordinary persons, supply
  ≤ 100 A single-phase, the standard supply fuse, devices as the maker
  specifies), so the person signing must confirm them; it is not a pass.
- No breaking capacity → incomplete. A typical rating the ruleset knows for
  the standard (from memory) is shown as a hint, never used to pass.
- A bound that settles nothing → investigate.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ..context import CircuitView, Context
from ..protection import positive
from ..protection.devices import match_standard
from ..results import CheckResult, Outcome
from ._compare import Side, compare_max, incomplete

__all__ = ["run"]

CHECK = "fault_current"
SECTION = "fault_current"


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    rules = ctx.ruleset
    pfc = view.reading("pfc_ka")
    if pfc is None:
        return
    basis = rules.basis(SECTION, "requirement")
    capacity = positive(view.raw("device_breaking_ka"))
    if capacity is None:
        typical: dict[str, float] = rules.get(SECTION, "typical_breaking_ka", {}) or {}
        standard = match_standard(view.raw("device_standard"), list(typical))
        hint: dict[str, Any] = {}
        detail = "needs device_breaking_ka to compare with the PFC"
        if standard is not None:
            hint = {"typical_breaking_ka": typical[standard],
                    "typical_basis": rules.basis(SECTION, "typical_breaking_ka")}
            detail += f" (typically {typical[standard]:g} kA for {standard}, from memory: confirm)"
        yield incomplete(CHECK, ["device_breaking_ka"], detail=detail, basis=basis, inputs=hint)
        return
    side = compare_max(pfc, capacity)
    inputs: dict[str, Any] = {"device_breaking_ka": capacity, "pfc": pfc.to_json()}
    common: dict[str, Any] = {"check": CHECK, "value": pfc.value, "relation": pfc.relation,
                              "limit_kind": "max", "unit": "kA", "inputs": inputs}
    shown = pfc.display("kA")
    if side is Side.WITHIN:
        yield CheckResult(outcome=Outcome.PASS, limit=capacity, method="breaking_capacity",
                          basis=basis, **common,
                          detail=f"PFC {shown} is within the device's {capacity:g} kA rating")
        return
    conditional = rules.get(SECTION, "consumer_unit_conditional_ka")
    max_phases = rules.get(SECTION, "conditional_max_phases")
    if (conditional is not None and max_phases is not None
            and compare_max(pfc, float(conditional)) is Side.WITHIN
            and (view.get("phases") or 1) <= max_phases):
        inputs["conditional_ka"] = float(conditional)
        yield CheckResult(
            outcome=Outcome.INVESTIGATE, limit=float(conditional), method="conditional_rating",
            basis=rules.basis(SECTION, "consumer_unit_conditional_ka"), **common,
            detail=f"PFC {shown} exceeds the device's {capacity:g} kA but is within the "
                   f"{float(conditional):g} kA conditional rating of a consumer unit (BS EN 61439-3 "
                   "Annex ZB): confirm a consumer unit on a single-phase supply up to 100 A with the "
                   "standard supply fuse and devices as its maker specifies")
        return
    beyond = side is Side.BEYOND
    yield CheckResult(
        outcome=Outcome.FAIL if beyond else Outcome.INVESTIGATE, limit=capacity,
        method="breaking_capacity", basis=basis, **common,
        detail=f"PFC {shown} exceeds the device's {capacity:g} kA rating" if beyond
        else f"the bounded reading {shown} does not show the PFC within {capacity:g} kA")
