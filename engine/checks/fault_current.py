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

from ..compiled import basis
from ..context import CircuitView, Context
from ..findings import BasisParts, Finding, found
from ..protection import positive
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ..standards import match_standard
from ._compare import Side, compare_max, incomplete

__all__ = ["run"]

CHECK = "fault_current"
SECTION = "fault_current"
_A_PER_KA = 1000.0


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    pfc = view.read.pfc_ka
    if pfc is None:
        return
    yield _capacity(view, ctx.ruleset, pfc)
    yield from _consistency(view, ctx.ruleset, pfc)


def _capacity(view: CircuitView, rules: Ruleset, pfc: Reading) -> Finding:
    requirement = basis(rules, SECTION, "requirement")
    read = view.read
    capacity = positive(read.device_breaking_ka)
    if capacity is None:
        typical: dict[str, float] = rules.get(SECTION, "typical_breaking_ka", {}) or {}
        standard = match_standard(read.device_standard, list(typical))
        hint: dict[str, Any] = {}
        detail = "needs the device's breaking capacity to compare with the PFC"
        if standard is not None:
            hint = {"typical_breaking_ka": typical[standard],
                    "typical_basis": rules.basis(SECTION, "typical_breaking_ka")}
            detail += f" (typically {typical[standard]:g} kA for {standard}, from memory: confirm)"
        return incomplete(CHECK, ["device_breaking_ka"], detail=detail, basis=requirement, inputs=hint)
    phases = view.get("phases") or 1
    multiple = rules.get(SECTION, "three_phase_multiple")
    inputs: dict[str, Any] = {"device_breaking_ka": capacity, "pfc": pfc.to_json()}
    method, judged = "breaking_capacity", pfc
    judged_basis: BasisParts = requirement
    factor = 1.0
    if phases == 3 and multiple is not None:
        factor = float(multiple)
        estimate = None if pfc.value is None else pfc.value * factor
        if estimate is not None and not math.isfinite(estimate):  # beyond any float: over range, found
            estimate = None  # by the property test (a PFC of 1.7e308 kA on a three-phase circuit)
        judged = Reading(value=estimate, relation=pfc.relation if estimate is not None else ">")
        inputs.update(three_phase_multiple=factor, three_phase_ka=judged.value)
        method = "three_phase_estimate"
        judged_basis = (requirement, basis(rules, SECTION, "three_phase_multiple"))

    def shown() -> str:
        what = f"three-phase PFC ≈ {factor:g} × {pfc.display('kA')} =" if method == "three_phase_estimate" \
            else "PFC"
        return f"{what} {judged.display('kA')}"

    side = compare_max(judged, capacity)
    if side is Side.WITHIN:
        return found(CHECK, Outcome.PASS, value=judged.value, relation=judged.relation, limit=capacity,
                     limit_kind="max", unit="kA", method=method, basis=judged_basis, inputs=inputs,
                     detail=lambda: f"{shown()} is within the device's {capacity:g} kA rating")
    conditional = rules.get(SECTION, "consumer_unit_conditional_ka")
    max_phases = rules.get(SECTION, "conditional_max_phases")
    if (conditional is not None and max_phases is not None
            and compare_max(judged, float(conditional)) is Side.WITHIN and phases <= max_phases):
        conditional_ka = float(conditional)
        inputs["conditional_ka"] = conditional_ka
        return found(CHECK, Outcome.INVESTIGATE, value=judged.value, relation=judged.relation,
                     limit=conditional_ka, limit_kind="max", unit="kA", method="conditional_rating",
                     basis=basis(rules, SECTION, "consumer_unit_conditional_ka"), inputs=inputs,
                     detail=lambda: f"{shown()} exceeds the device's {capacity:g} kA but is within the "
                                    f"{conditional_ka:g} kA conditional rating of a consumer unit (BS EN "
                                    "61439-3 Annex ZB): confirm a consumer unit on a single-phase supply up "
                                    "to 100 A with the standard supply fuse and devices as its maker "
                                    "specifies")
    beyond = side is Side.BEYOND
    return found(CHECK, Outcome.FAIL if beyond else Outcome.INVESTIGATE, value=judged.value,
                 relation=judged.relation, limit=capacity, limit_kind="max", unit="kA", method=method,
                 basis=judged_basis, inputs=inputs,
                 detail=(lambda: f"{shown()} exceeds the device's {capacity:g} kA rating") if beyond
                 else (lambda: f"the bounded reading {shown()} does not show the PFC within {capacity:g} kA"))


def _consistency(view: CircuitView, rules: Ruleset, pfc: Reading) -> Iterator[Finding]:
    ratio = rules.get(SECTION, "consistency_ratio")
    if ratio is None or not pfc.exact or pfc.value is None:
        return
    u0 = view.get("nominal_voltage_v")
    if u0 is None:
        return
    ratio = float(ratio)
    agreement = basis(rules, SECTION, "consistency_ratio")
    read = view.read
    for field, method, label in (("ze_ohm", "pfc_vs_ze", "Ze"), ("zs_ohm", "pfc_vs_zs", "Zs")):
        loop = read.ze_ohm if field == "ze_ohm" else read.zs_ohm
        if loop is None or not loop.exact or loop.value is None:
            continue
        both_ways = method == "pfc_vs_ze" and read.earthing == "TN-C-S"
        yield _agreement(pfc, float(u0), loop, field, method, label, ratio, both_ways, agreement)


def _agreement(pfc: Reading, u0: float, loop: Reading, field: str, method: str, label: str, ratio: float,
               both_ways: bool, agreement: BasisParts) -> Finding:
    """The recorded PFC against the earth fault current U0 / ``loop`` implies."""
    assert pfc.value is not None and loop.value is not None
    pfc_ka, loop_ohm = pfc.value, loop.value
    implied = u0 / loop_ohm / _A_PER_KA
    low = ratio * implied
    high = implied / ratio if both_ways else None
    if pfc_ka < low:
        outcome = Outcome.INVESTIGATE
        text = lambda: (f"PFC {pfc.display('kA')} is below {ratio:g} × U0/{label} = {low:.3g} kA: the PFC "  # noqa: E731
                        f"and {label} readings disagree")
    elif high is not None and pfc_ka > high:
        outcome = Outcome.INVESTIGATE
        text = lambda: (f"PFC {pfc.display('kA')} is above U0/Ze / {ratio:g} = {high:.3g} kA, which on "  # noqa: E731
                        "TN-C-S (earth path = neutral) the readings cannot both be")
    else:
        outcome = Outcome.PASS
        text = lambda: (f"PFC {pfc.display('kA')} agrees with U0/{label} = {implied:.3g} kA ({label} "  # noqa: E731
                        f"{loop.display('Ω')})")
    return found(CHECK, outcome, value=pfc_ka, limit=low, limit_kind="min", unit="kA", method=method,
                 basis=agreement, detail=text,
                 inputs=lambda: {"pfc_ka": pfc_ka, field: loop_ohm, "u0_v": u0, "implied_ka": implied,
                                 "ratio": ratio})
