"""Overload protection: Ib ≤ In ≤ Iz (BS 7671 Reg. 433.1.1 / IEC 60364-4-43 433.1).

Invariants:
- Applies where the record describes the circuit's protection or cable
  (``design_current_a``, ``device_rating_a``, ``line_mm2`` or ``cable_iz_a``):
  every circuit needs overload protection, but a record with none of these
  gives nothing to judge and is left out.
- Two judgements. ``ib_le_in``: the design current within the device's rating,
  where Ib is recorded. ``in_le_iz``: the rating within the cable's Iz after the
  correction factors Ca × Cg × Ci (each 1 where unrecorded, and reported as a
  default); with a rewirable fuse (BS 3036) In ≤ 0.725 Iz (Reg. 433.1.202).
- Iz: the designer's ``cable_iz_a`` where given, else the ruleset's tables for
  the recorded cable type, reference method, size and maximum conductor
  temperature (:mod:`engine.cable_ratings`; from memory, and the basis says so).
  Where the designer's figure is above the table's for the same cable, a pass
  would rest on the designer's figure alone: ``investigate``.
- Where the type or method is unrecorded, all fitting table entries count: In
  within the least of them passes, In above the most fails, else ``incomplete``
  naming what would decide it.
- A ring final circuit (BS 7671 Reg. 433.1.204): 2.5 mm² copper or larger on a
  device of at most 32 A meets the rule where Iz ≥ 20 A (``ring_433_1_204``);
  outside those bounds the general rule applies (a 2.5 mm² ring on 40 A fails).
  The IEC ruleset has no such rule: a ring there needs ``cable_iz_a``.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ..cable_ratings import Candidates, iz_candidates
from ..compiled import MISS, basis, remember
from ..context import CircuitView, Context
from ..findings import Basis, BasisParts, Detail, Finding, found, render
from ..results import Outcome
from ..ruleset import Ruleset
from ..standards import match_standard
from ._compare import incomplete

__all__ = ["run"]

CHECK = "overload"
SECTION = "overload"
_FACTORS = ("ambient_factor", "grouping_factor", "thermal_insulation_factor")
_TABLE_KEY = "overload.iz_candidates"


def _has_design(view: CircuitView) -> bool:
    return (view.has("design_current_a") or view.has("device_rating_a") or view.has("line_mm2")
            or view.has("cable_iz_a"))


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    if not _has_design(view):
        return
    rules = ctx.ruleset
    requirement = basis(rules, SECTION, "requirement")
    read = view.read
    rating, ib = read.device_rating_a, read.design_current_a
    if rating is None:
        yield incomplete(CHECK, ["device_rating_a"], basis=requirement,
                         detail="needs the device's rating In to compare with Ib and Iz")
        return
    rating = float(rating)
    if ib is not None:
        ib_a = float(ib)
        within = ib_a <= rating
        yield found(CHECK, Outcome.PASS if within else Outcome.FAIL, value=ib_a, limit=rating,
                    limit_kind="max", unit="A", method="ib_le_in", basis=requirement,
                    inputs={"design_current_a": ib_a, "device_rating_a": rating},
                    detail=lambda: f"Ib {ib_a:g} A is {'within' if within else 'above'} In {rating:g} A")
    yield _in_le_iz(view, ctx, rating, requirement)


def _factors(view: CircuitView) -> tuple[float, dict[str, float]]:
    values = {name: float(view.get(name) or 1.0) for name in _FACTORS}
    product = 1.0
    for value in values.values():
        product *= value
    return product, values


def _in_le_iz(view: CircuitView, ctx: Context, rating: float, requirement: Basis) -> Finding:
    rules = ctx.ruleset
    product, factors = _factors(view)
    rewirable = match_standard(view.read.device_standard,
                               rules.get(SECTION, "rewirable_fuse_standards", []) or [])
    k = float(rules.value(SECTION, "rewirable_fuse_factor")) if rewirable else 1.0
    inputs: dict[str, Any] = {"device_rating_a": rating, "correction_factor": product, **factors}
    rule: BasisParts = requirement
    if rewirable:
        inputs["rewirable_fuse_factor"] = k
        rule = (requirement, basis(rules, SECTION, "rewirable_fuse_factor"))
    table = _table(view, ctx)
    designer = view.read.cable_iz_a
    ring = _ring_rule(view, rules, rating)
    if ring is not None:
        return _ring(view, rules, ring, designer, table, product, inputs)
    if designer is not None:
        return _designer(float(designer), table, product, rating, k, inputs, rule)
    if table is None:
        missing = ["cable_iz_a"] + [n for n in ("line_mm2",) if view.raw(n) is None]
        return incomplete(CHECK, missing, basis=rule, inputs=inputs,
                          detail="needs Iz: the designer's Iz, or a copper cable's size, type and "
                                 "installation method the ruleset's tables hold")
    return _from_table(table, product, rating, k, inputs, rule)


def _table(view: CircuitView, ctx: Context) -> Candidates | None:
    """The fitting Iz table entries: a pure function of the ruleset and these values, kept per ruleset."""
    read = view.read
    line = read.line_mm2
    if line is None:
        return None
    insulation = view.get("insulation_temp_c")
    args = (read.cable_type, read.reference_method,
            float(insulation if insulation is not None else 70.0), 3 if view.get("phases") == 3 else 2,
            float(line), str(view.get("conductor_material")))
    key = (_TABLE_KEY, *args)
    cached = ctx.memo.get(key, MISS)
    if cached is MISS:
        cached = remember(ctx.memo, key, iz_candidates(ctx.ruleset, cable_type=args[0], method=args[1],
                                                       insulation_c=args[2], loaded=args[3], line_mm2=args[4],
                                                       material=args[5]))
    found_: Candidates | None = cached
    return found_


def _verdict(rating: float, limit: float, inputs: dict[str, Any], rule: BasisParts, what: Detail) -> Finding:
    within = rating <= limit
    return found(CHECK, Outcome.PASS if within else Outcome.FAIL, value=rating, limit=limit, limit_kind="max",
                 unit="A", method="in_le_iz", basis=rule, inputs=inputs,
                 detail=lambda: f"In {rating:g} A is {'within' if within else 'above'} {render(what)} = "
                                f"{limit:.4g} A")


def _parts(rule: BasisParts, *more: str) -> BasisParts:
    head = rule if isinstance(rule, tuple) else (rule,)
    return (*head, *more)


def _designer(iz: float, table: Candidates | None, product: float, rating: float, k: float,
              inputs: dict[str, Any], rule: BasisParts) -> Finding:
    inputs = {**inputs, "iz_a": iz, "iz_basis": "record: cable_iz_a (the designer's figure)"}
    limit = k * iz
    result = _verdict(rating, limit, inputs, _parts(rule, "designer's Iz"),
                      (lambda: f"{k:g} × the designer's Iz {iz:g} A") if k != 1.0
                      else (lambda: f"the designer's Iz {iz:g} A"))
    if result.outcome is Outcome.PASS and table is not None and table.exact:
        tabulated = table.least[0] * product
        if rating > k * tabulated:
            inputs["table_iz_a"] = tabulated
            least = table.least[1]
            return found(CHECK, Outcome.INVESTIGATE, value=rating, limit=limit, limit_kind="max", unit="A",
                         method="in_le_iz", basis=_parts(rule, table.basis), inputs=inputs,
                         detail=lambda: f"In {rating:g} A is within the designer's Iz {iz:g} A but above the "
                                        f"{k * tabulated:.4g} A the table gives for {least} (from memory): "
                                        "confirm the designer's figure")
    return result


def _from_table(table: Candidates, product: float, rating: float, k: float, inputs: dict[str, Any],
                rule: BasisParts) -> Finding:
    least, most = table.least, table.most
    inputs = {**inputs, "iz_a": least[0] * product, "iz_basis": table.basis, "iz_table_a": least[0]}
    rule = _parts(rule, f"{table.basis} (from memory)")
    if table.exact:
        return _verdict(rating, k * least[0] * product, inputs, rule,
                        lambda: f"{'0.725 × ' if k != 1.0 else ''}Iz of {least[1]} ({least[0]:g} A × "
                                f"{product:.3g})")
    if rating <= k * least[0] * product:
        return _verdict(rating, k * least[0] * product, inputs, rule,
                        lambda: f"the least Iz any fitting table gives ({least[1]}, {least[0]:g} A × "
                                f"{product:.3g})")
    if rating > k * most[0] * product:
        inputs["iz_a"] = most[0] * product
        return _verdict(rating, k * most[0] * product, inputs, rule,
                        lambda: f"the most Iz any fitting table gives ({most[1]}, {most[0]:g} A × "
                                f"{product:.3g})")
    unknown = table.unknown
    return incomplete(CHECK, list(unknown), basis=rule,
                      inputs={**inputs, "iz_range_a": [least[0] * product, most[0] * product]},
                      detail=lambda: f"In {rating:g} A is within the Iz of some installation methods and not "
                                     f"others ({least[0] * product:.4g}–{most[0] * product:.4g} A): record "
                                     f"{' and '.join(unknown)}")


def _ring_rule(view: CircuitView, rules: Ruleset, rating: float) -> dict[str, Any] | None:
    rule = rules.get(SECTION, "ring_rule")
    if not rule or view.get("circuit_form") != "ring":
        return None
    line = view.read.line_mm2
    if (rating > float(rule["max_in_a"]) or line is None or float(line) < float(rule["min_line_mm2"])
            or view.get("conductor_material") != "copper"):
        return None
    return dict(rule)


def _ring(view: CircuitView, rules: Ruleset, rule: dict[str, Any], designer: Any, table: Candidates | None,
          product: float, inputs: dict[str, Any]) -> Finding:
    ring_basis: BasisParts = basis(rules, SECTION, "ring_rule")
    need = float(rule["min_iz_a"])
    rating = inputs["device_rating_a"]
    if designer is not None:
        low = high = float(designer)
        how = "the designer's Iz"
    elif table is not None:
        low, high = table.least[0] * product, table.most[0] * product
        how = f"the Iz of {table.least[1]} (from memory)" if table.exact else "the Iz of every fitting table"
        ring_basis = _parts(ring_basis, table.basis)
    else:
        return incomplete(CHECK, ["cable_iz_a", "reference_method"], basis=ring_basis, inputs=inputs,
                          detail=lambda: f"a ring on {rating:g} A needs Iz ≥ {need:g} A: give the designer's "
                                         "Iz, or the cable type and installation method")
    if low < need <= high:
        return incomplete(CHECK, list(table.unknown) if table is not None else ["cable_iz_a"],
                          basis=ring_basis, inputs={**inputs, "iz_range_a": [low, high]},
                          detail=lambda: f"a {rating:g} A ring needs Iz ≥ {need:g} A; the fitting tables "
                                         f"give {low:.4g}–{high:.4g} A: record the cable type and reference "
                                         "method")
    iz = low if low >= need else high
    outcome = Outcome.PASS if iz >= need else Outcome.FAIL
    return found(CHECK, outcome, value=iz, limit=need, limit_kind="min", unit="A", method="ring_433_1_204",
                 basis=ring_basis, inputs={**inputs, "iz_a": iz},
                 detail=lambda: f"ring final circuit: {how} {iz:.4g} A is "
                                f"{'at least' if iz >= need else 'below'} the {need:g} A a {rating:g} A ring "
                                "needs")
