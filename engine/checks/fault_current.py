"""Prospective fault current against the device's rated short-circuit capacity (434.5.1 / 536.4).

Invariants:
- Applies where ``pfc_ka`` is recorded. PFC ≤ ``device_breaking_ka`` → pass.
- A three-phase circuit is judged on its three-phase prospective current,
  estimated as the ruleset's multiple of the recorded line–neutral figure (2×,
  common practice cited in the IET On-Site Guide; derived from a symmetrical
  three-phase fault U0/Zline against a line–neutral fault U0/(Zline + Zn) with
  equal impedances) (``three_phase_estimate``).
- Above the capacity → fail, except where the ruleset has a conditional rating
  for consumer units (BS EN 61439-3 Annex ZB, 16 kA, a UK deviation) and the
  PFC is within it on a single-phase circuit: then ``investigate``. The record
  cannot show Annex ZB's conditions (a consumer unit for ordinary persons,
  supply ≤ 100 A single-phase, the standard supply fuse, devices as the maker
  specifies), so the person signing must confirm them; it is not a pass.
- No breaking capacity → incomplete. A typical rating the ruleset knows for
  the standard (from memory) is shown as a hint, never used to pass.
- A bound that settles nothing → investigate.
- Readings that contradict each other → ``investigate`` (``pfc_vs_ze``,
  ``pfc_vs_zs``): the recorded PFC (the larger of the prospective short-circuit
  and earth fault currents, at the origin or the board) is at least the earth
  fault current U0/Ze the recorded Ze implies, and at least U0/Zs at the
  circuit's end; on TN-C-S, where the earth path is the neutral, it is also
  not far above U0/Ze. Beyond the ruleset's ratio either way they disagree.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from typing import Any

from ..context import CircuitView, Context
from ..protection import positive
from ..readings import Reading
from ..results import CheckResult, Outcome
from ..ruleset import Ruleset
from ..standards import match_standard
from ._compare import Side, compare_max, incomplete

__all__ = ["run"]

CHECK = "fault_current"
SECTION = "fault_current"
_A_PER_KA = 1000.0


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    pfc = view.reading("pfc_ka")
    if pfc is None:
        return
    yield _capacity(view, ctx.ruleset, pfc)
    yield from _consistency(view, ctx.ruleset, pfc)


def _capacity(view: CircuitView, rules: Ruleset, pfc: Reading) -> CheckResult:
    basis = rules.basis(SECTION, "requirement")
    capacity = positive(view.raw("device_breaking_ka"))
    if capacity is None:
        typical: dict[str, float] = rules.get(SECTION, "typical_breaking_ka", {}) or {}
        standard = match_standard(view.raw("device_standard"), list(typical))
        hint: dict[str, Any] = {}
        detail = "needs the device's breaking capacity to compare with the PFC"
        if standard is not None:
            hint = {"typical_breaking_ka": typical[standard],
                    "typical_basis": rules.basis(SECTION, "typical_breaking_ka")}
            detail += f" (typically {typical[standard]:g} kA for {standard}, from memory: confirm)"
        return incomplete(CHECK, ["device_breaking_ka"], detail=detail, basis=basis, inputs=hint)
    phases = view.get("phases") or 1
    multiple = rules.get(SECTION, "three_phase_multiple")
    inputs: dict[str, Any] = {"device_breaking_ka": capacity, "pfc": pfc.to_json()}
    method, what, judged = "breaking_capacity", "PFC", pfc
    if phases == 3 and multiple is not None:
        factor = float(multiple)
        estimate = None if pfc.value is None else pfc.value * factor
        if estimate is not None and not math.isfinite(estimate):  # beyond any float: over range, found
            estimate = None  # by the property test (a PFC of 1.7e308 kA on a three-phase circuit)
        judged = Reading(value=estimate, relation=pfc.relation if estimate is not None else ">")
        inputs.update(three_phase_multiple=factor, three_phase_ka=judged.value)
        method, what = "three_phase_estimate", f"three-phase PFC ≈ {factor:g} × {pfc.display('kA')} ="
        basis = f"{basis}; {rules.basis(SECTION, 'three_phase_multiple')}"
    side = compare_max(judged, capacity)
    common: dict[str, Any] = {"check": CHECK, "value": judged.value, "relation": judged.relation,
                              "limit_kind": "max", "unit": "kA", "inputs": inputs}
    shown = f"{what} {judged.display('kA')}"
    if side is Side.WITHIN:
        return CheckResult(outcome=Outcome.PASS, limit=capacity, method=method, basis=basis, **common,
                           detail=f"{shown} is within the device's {capacity:g} kA rating")
    conditional = rules.get(SECTION, "consumer_unit_conditional_ka")
    max_phases = rules.get(SECTION, "conditional_max_phases")
    if (conditional is not None and max_phases is not None
            and compare_max(judged, float(conditional)) is Side.WITHIN and phases <= max_phases):
        inputs["conditional_ka"] = float(conditional)
        return CheckResult(
            outcome=Outcome.INVESTIGATE, limit=float(conditional), method="conditional_rating",
            basis=rules.basis(SECTION, "consumer_unit_conditional_ka"), **common,
            detail=f"{shown} exceeds the device's {capacity:g} kA but is within the "
                   f"{float(conditional):g} kA conditional rating of a consumer unit (BS EN 61439-3 "
                   "Annex ZB): confirm a consumer unit on a single-phase supply up to 100 A with the "
                   "standard supply fuse and devices as its maker specifies")
    beyond = side is Side.BEYOND
    return CheckResult(
        outcome=Outcome.FAIL if beyond else Outcome.INVESTIGATE, limit=capacity, method=method,
        basis=basis, **common,
        detail=f"{shown} exceeds the device's {capacity:g} kA rating" if beyond
        else f"the bounded reading {shown} does not show the PFC within {capacity:g} kA")


def _consistency(view: CircuitView, rules: Ruleset, pfc: Reading) -> Iterator[CheckResult]:
    ratio = rules.get(SECTION, "consistency_ratio")
    if ratio is None or not pfc.exact or pfc.value is None:
        return
    u0 = view.get("nominal_voltage_v")
    if u0 is None:
        return
    ratio = float(ratio)
    basis = rules.basis(SECTION, "consistency_ratio")
    for field, method, label in (("ze_ohm", "pfc_vs_ze", "Ze"), ("zs_ohm", "pfc_vs_zs", "Zs")):
        loop = view.reading(field)
        if loop is None or not loop.exact or loop.value is None:
            continue
        implied = float(u0) / loop.value / _A_PER_KA
        low = ratio * implied
        both_ways = method == "pfc_vs_ze" and view.raw("earthing") == "TN-C-S"
        high = implied / ratio if both_ways else None
        inputs = {"pfc_ka": pfc.value, field: loop.value, "u0_v": float(u0), "implied_ka": implied,
                  "ratio": ratio}
        shown = pfc.display("kA")
        if pfc.value < low:
            outcome = Outcome.INVESTIGATE
            text = (f"PFC {shown} is below {ratio:g} × U0/{label} = {low:.3g} kA: the PFC and {label} "
                    "readings disagree")
        elif high is not None and pfc.value > high:
            outcome = Outcome.INVESTIGATE
            text = (f"PFC {shown} is above U0/Ze / {ratio:g} = {high:.3g} kA, which on TN-C-S (earth path = "
                    "neutral) the readings cannot both be")
        else:
            outcome = Outcome.PASS
            text = f"PFC {shown} agrees with U0/{label} = {implied:.3g} kA ({label} {loop.display('Ω')})"
        yield CheckResult(check=CHECK, outcome=outcome, value=pfc.value, limit=low, limit_kind="min",
                          unit="kA", method=method, basis=basis, inputs=inputs, detail=text)
