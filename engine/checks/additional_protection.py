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

from ..compiled import basis
from ..context import CircuitView, Context
from ..findings import Detail, Finding, found, render
from ..results import Outcome
from ..ruleset import Ruleset
from ..words import word_for
from ._compare import incomplete
from ._rcd import rcd_evidence

__all__ = ["reasons", "run"]

CHECK = "additional_protection"
SECTION = "additional_protection"
_CONCEALED = "cables concealed in a wall less than 50 mm deep without earthed protection"
_LIGHTING = "luminaires on a final circuit in domestic premises"


def reasons(view: CircuitView, rules: Ruleset) -> tuple[list[tuple[str, Detail]], list[str]]:
    """(why additional protection applies: (key, sentence) each; fields whose absence leaves it open)."""
    found_: list[tuple[str, Detail]] = []
    missing: list[str] = []
    read = view.read
    if view.get("socket_outlets"):
        top = float(rules.value(SECTION, "socket_max_a"))
        socket, device = read.socket_rating_a, read.device_rating_a
        if socket is not None:
            if float(socket) <= top:
                found_.append(("sockets", lambda: f"socket-outlets rated {float(socket):g} A (≤ {top:g} A)"))
        elif device is not None and float(device) <= top:
            found_.append(("sockets", lambda: f"socket-outlets on a {float(device):g} A circuit, so rated "
                                              f"≤ {top:g} A"))
        else:
            missing.append("socket_rating_a")
    if read.outdoor_equipment:
        outdoor = float(rules.value(SECTION, "outdoor_mobile_max_a"))
        found_.append(("outdoor", lambda: f"mobile equipment (≤ {outdoor:g} A) for use outdoors"))
    if rules.get(SECTION, "domestic_lighting") and read.premises == "domestic" \
            and view.get("load_type") == "lighting":
        found_.append(("lighting", _LIGHTING))
    if rules.get(SECTION, "concealed_cables") and read.concealed_in_wall:
        found_.append(("concealed", _CONCEALED))
    return found_, missing


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    found_, missing = reasons(view, rules)
    required = basis(rules, SECTION, "max_residual_ma")
    if not found_:
        if missing:
            yield incomplete(CHECK, missing, basis=basis(rules, SECTION, "socket_max_a"),
                             detail="needs the socket-outlets' rating to tell whether an RCD is required")
        return

    def why() -> str:
        return "; ".join(render(text) for _, text in found_)

    inputs: dict[str, Any] = {"required_for": [key for key, _ in found_]}
    evidence = rcd_evidence(view)
    if evidence is None:
        yield _no_rcd(view, rules, found_, why, inputs, required)
        return
    inputs["rcd_shown_by"] = evidence
    idn = view.read.rcd_residual_ma
    top = float(rules.value(SECTION, "max_residual_ma"))
    if idn is None:
        yield incomplete(CHECK, ["rcd_residual_ma"], basis=required, inputs=inputs,
                         detail=lambda: f"an RCD is there ({word_for(evidence)}) but its IΔn is not "
                                        f"recorded; required for {why()}")
    else:
        idn_ma = float(idn)
        within = idn_ma <= top
        yield found(CHECK, Outcome.PASS if within else Outcome.FAIL, value=idn_ma, limit=top,
                    limit_kind="max", unit="mA", method="residual_current", basis=required, inputs=inputs,
                    detail=lambda: f"{idn_ma:g} mA RCD {'within' if within else 'above'} the {top:g} mA "
                                   f"required for {why()}")
    kind = _type_result(view, rules, found_, inputs)
    if kind is not None:
        yield kind


def _no_rcd(view: CircuitView, rules: Ruleset, found_: list[tuple[str, Detail]], why: Any,
            inputs: dict[str, Any], required: Any) -> Finding:
    keys = {key for key, _ in found_}
    exception = (keys == {"sockets"} and view.read.premises == "other"
                 and rules.get(SECTION, "socket_exception_other_premises"))
    if exception:
        return found(CHECK, Outcome.INVESTIGATE, method="residual_current",
                     basis=basis(rules, SECTION, "socket_exception_other_premises"), inputs=inputs,
                     detail=lambda: f"no RCD recorded for {why()}: outside dwellings the regulation allows a "
                                    "documented risk assessment to omit it; confirm one exists, else fit a "
                                    "30 mA RCD")
    return found(CHECK, Outcome.FAIL, method="residual_current", basis=required, inputs=inputs,
                 detail=lambda: f"no RCD recorded, but a 30 mA RCD is required for {why()}")


def _type_result(view: CircuitView, rules: Ruleset, found_: list[tuple[str, Detail]],
                 inputs: dict[str, Any]) -> Finding | None:
    read = view.read
    kind, needed = read.rcd_type, read.rcd_type_required
    order: list[str] = rules.get(SECTION, "rcd_type_order", []) or []
    type_order = basis(rules, SECTION, "rcd_type_order")
    inputs = {**inputs, "rcd_type": kind, "rcd_type_required": needed}
    if needed is not None:
        if kind is None:
            return incomplete(CHECK, ["rcd_type"], basis=type_order, inputs=inputs,
                              detail=lambda: f"the load needs a type {needed} RCD; the RCD's type is not "
                                             "recorded")
        ok = kind in order and needed in order and order.index(kind) >= order.index(needed)
        return found(CHECK, Outcome.PASS if ok else Outcome.FAIL, method="rcd_type", basis=type_order,
                     inputs=inputs,
                     detail=lambda: f"type {kind} RCD {'covers' if ok else 'does not cover'} the type "
                                    f"{needed} the load needs")
    if kind != "AC" or not rules.get(SECTION, "type_ac_fixed_only"):
        return None
    fixed_only = basis(rules, SECTION, "type_ac_fixed_only")
    if {key for key, _ in found_} & {"sockets", "outdoor"}:
        return found(CHECK, Outcome.FAIL, method="rcd_type", basis=fixed_only, inputs=inputs,
                     detail="type AC RCD on socket-outlets or mobile equipment: type AC serves only "
                            "fixed equipment known to draw no d.c. component (type A or better)")
    return found(CHECK, Outcome.INVESTIGATE, method="rcd_type", basis=fixed_only, inputs=inputs,
                 detail="type AC RCD: confirm the fixed equipment draws no d.c. component, or record "
                        "rcd_type_required")
