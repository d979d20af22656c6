"""Additional protection by RCD where the regulations require it, and the RCD type against the load.

Invariants (BS 7671:2018+A2:2022 Reg. 411.3.3, 411.3.4, 522.6.202/203, 531.3.3; IEC 60364-4-41
411.3.3; the figures and which rules apply are the ruleset's ``additional_protection`` section):
- Applies where the record shows a reason for it: socket-outlets rated up to
  32 A (a ring has socket-outlets; an unrecorded socket rating on a device of at
  most 32 A is taken as at most 32 A and said so); mobile equipment for use
  outdoors; luminaires on a final circuit in domestic premises (BS only);
  cables concealed in a wall less than 50 mm deep (BS only). A record that
  shows none of these gets no result (silence is not a reason).
- ``residual_current``: an RCD must be there (its rating, an RCBO, or a recorded
  trip time shows one) with IΔn ≤ 30 mA. No RCD → fail; but where the only
  reason is socket-outlets in premises recorded as other than domestic, the
  regulation allows a documented risk assessment the record cannot show →
  investigate. An RCD without a recorded IΔn → incomplete. IΔn above 30 mA
  (a 100 mA RCD) → fail.
- ``rcd_type``, judged where the record says the type: type AC feeding
  socket-outlets or mobile equipment → fail (type AC only for fixed equipment
  known to draw no d.c. component); type AC on fixed equipment → investigate
  unless the record says the type the load needs (``rcd_type_required``);
  a type below the one the load needs (AC < A < F < B) → fail.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ..context import CircuitView, Context
from ..results import CheckResult, Outcome
from ..ruleset import Ruleset
from ..words import word_for
from ._compare import incomplete
from ._rcd import rcd_evidence

__all__ = ["reasons", "run"]

CHECK = "additional_protection"
SECTION = "additional_protection"


def reasons(view: CircuitView, rules: Ruleset) -> tuple[list[tuple[str, str]], list[str]]:
    """(why additional protection applies: (key, sentence) each; fields whose absence leaves it open)."""
    found: list[tuple[str, str]] = []
    missing: list[str] = []
    if view.get("socket_outlets"):
        top = float(rules.value(SECTION, "socket_max_a"))
        socket, device = view.raw("socket_rating_a"), view.raw("device_rating_a")
        if socket is not None:
            if float(socket) <= top:
                found.append(("sockets", f"socket-outlets rated {float(socket):g} A (≤ {top:g} A)"))
        elif device is not None and float(device) <= top:
            found.append(("sockets", f"socket-outlets on a {float(device):g} A circuit, so rated "
                                     f"≤ {top:g} A"))
        else:
            missing.append("socket_rating_a")
    if view.raw("outdoor_equipment"):
        top = float(rules.value(SECTION, "outdoor_mobile_max_a"))
        found.append(("outdoor", f"mobile equipment (≤ {top:g} A) for use outdoors"))
    if rules.get(SECTION, "domestic_lighting") and view.raw("premises") == "domestic" \
            and view.get("load_type") == "lighting":
        found.append(("lighting", "luminaires on a final circuit in domestic premises"))
    if rules.get(SECTION, "concealed_cables") and view.raw("concealed_in_wall"):
        found.append(("concealed", "cables concealed in a wall less than 50 mm deep without earthed "
                                   "protection"))
    return found, missing


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    rules = ctx.ruleset
    found, missing = reasons(view, rules)
    basis = rules.basis(SECTION, "max_residual_ma")
    if not found:
        if missing:
            yield incomplete(CHECK, missing, basis=rules.basis(SECTION, "socket_max_a"),
                             detail="needs the socket-outlets' rating to tell whether an RCD is required")
        return
    why = "; ".join(text for _, text in found)
    inputs: dict[str, Any] = {"required_for": [key for key, _ in found]}
    evidence = rcd_evidence(view)
    if evidence is None:
        yield _no_rcd(view, rules, found, why, inputs, basis)
        return
    inputs["rcd_shown_by"] = evidence
    idn = view.raw("rcd_residual_ma")
    top = float(rules.value(SECTION, "max_residual_ma"))
    if idn is None:
        yield incomplete(CHECK, ["rcd_residual_ma"], basis=basis, inputs=inputs,
                         detail=f"an RCD is there ({word_for(evidence)}) but its IΔn is not recorded; "
                                f"required for {why}")
    else:
        within = float(idn) <= top
        yield CheckResult(check=CHECK, outcome=Outcome.PASS if within else Outcome.FAIL, value=float(idn),
                          limit=top, limit_kind="max", unit="mA", method="residual_current", basis=basis,
                          inputs=inputs,
                          detail=f"{float(idn):g} mA RCD {'within' if within else 'above'} the {top:g} mA "
                                 f"required for {why}")
    kind = _type_result(view, rules, found, inputs)
    if kind is not None:
        yield kind


def _no_rcd(view: CircuitView, rules: Ruleset, found: list[tuple[str, str]], why: str,
            inputs: dict[str, Any], basis: str) -> CheckResult:
    keys = {key for key, _ in found}
    exception = (keys == {"sockets"} and view.raw("premises") == "other"
                 and rules.get(SECTION, "socket_exception_other_premises"))
    if exception:
        return CheckResult(check=CHECK, outcome=Outcome.INVESTIGATE, method="residual_current",
                           basis=rules.basis(SECTION, "socket_exception_other_premises"), inputs=inputs,
                           detail=f"no RCD recorded for {why}: outside dwellings the regulation allows a "
                                  "documented risk assessment to omit it; confirm one exists, else fit a "
                                  "30 mA RCD")
    return CheckResult(check=CHECK, outcome=Outcome.FAIL, method="residual_current", basis=basis,
                       inputs=inputs, detail=f"no RCD recorded, but a 30 mA RCD is required for {why}")


def _type_result(view: CircuitView, rules: Ruleset, found: list[tuple[str, str]],
                 inputs: dict[str, Any]) -> CheckResult | None:
    kind, needed = view.raw("rcd_type"), view.raw("rcd_type_required")
    order: list[str] = rules.get(SECTION, "rcd_type_order", []) or []
    basis = rules.basis(SECTION, "rcd_type_order")
    inputs = {**inputs, "rcd_type": kind, "rcd_type_required": needed}
    if needed is not None:
        if kind is None:
            return incomplete(CHECK, ["rcd_type"], basis=basis, inputs=inputs,
                              detail=f"the load needs a type {needed} RCD; the RCD's type is not recorded")
        ok = kind in order and needed in order and order.index(kind) >= order.index(needed)
        return CheckResult(check=CHECK, outcome=Outcome.PASS if ok else Outcome.FAIL, method="rcd_type",
                           basis=basis, inputs=inputs,
                           detail=f"type {kind} RCD {'covers' if ok else 'does not cover'} the type {needed} "
                                  "the load needs")
    if kind != "AC" or not rules.get(SECTION, "type_ac_fixed_only"):
        return None
    basis = rules.basis(SECTION, "type_ac_fixed_only")
    if {key for key, _ in found} & {"sockets", "outdoor"}:
        return CheckResult(check=CHECK, outcome=Outcome.FAIL, method="rcd_type", basis=basis, inputs=inputs,
                           detail="type AC RCD on socket-outlets or mobile equipment: type AC serves only "
                                  "fixed equipment known to draw no d.c. component (type A or better)")
    return CheckResult(check=CHECK, outcome=Outcome.INVESTIGATE, method="rcd_type", basis=basis,
                       inputs=inputs,
                       detail="type AC RCD: confirm the fixed equipment draws no d.c. component, or record "
                              "rcd_type_required")
