"""TT earth electrode: RA × IΔn ≤ 50 V (411.5.3), and whether RA looks stable.

Invariants:
- Applies to TT installations, and where ``ra_ohm`` is recorded but the
  earthing is not (only a TT installation has an RA to record). TN and IT are
  left out.
- Two results: ``ra_x_idn`` (RA × IΔn against the touch-voltage limit, in V)
  and ``electrode_stability`` (RA above 200 Ω → investigate: it may not stay
  stable with soil drying or freezing; a handbook note, not a limit).
- No RA → one incomplete. No IΔn → the touch-voltage result is incomplete
  (TT fault protection is normally by RCD, 411.5.2; with an overcurrent device
  the ``loop_impedance`` check judges it) and reports the largest IΔn the
  recorded RA allows, 50 V / RA.
- Bounded RA readings keep their bound through the product.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass

from ..compiled import basis, derived
from ..context import CircuitView, Context
from ..findings import Basis, Finding, found
from ..protection import positive
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import Side, compare_max, incomplete

__all__ = ["run"]

CHECK = "earth_electrode"
SECTION = "earth_electrode"
_MA_PER_A = 1000.0


@dataclass(frozen=True, slots=True)
class _Touch:
    volts: float
    basis: Basis


@dataclass(frozen=True, slots=True)
class _Stable:
    ohm: float
    basis: Basis


def _touch(rules: Ruleset) -> _Touch:
    return _Touch(volts=float(rules.value(SECTION, "touch_voltage_v")),
                  basis=basis(rules, SECTION, "touch_voltage_v"))


def _stable(rules: Ruleset) -> _Stable:
    return _Stable(ohm=float(rules.value(SECTION, "stable_max_ohm")),
                   basis=basis(rules, SECTION, "stable_max_ohm"))


def _volts(product: Reading) -> str:
    """RA × IΔn as a person reads it: 1.86 V, not the float's 1.8599999999999999 V."""
    if product.value is None:
        return product.display("V")
    relation = "" if product.relation == "=" else f"{product.relation} "
    return f"{relation}{product.value:.4g} V"


_OUTCOME = {Side.WITHIN: Outcome.PASS, Side.BEYOND: Outcome.FAIL, Side.UNKNOWN: Outcome.INVESTIGATE}


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    read = view.read
    earthing = read.earthing
    ra = read.ra_ohm
    if earthing != "TT" and not (earthing is None and ra is not None):
        return
    touch = derived(rules, _touch)
    touch_v = touch.volts
    if ra is None:
        yield incomplete(CHECK, ["ra_ohm"], basis=touch.basis)
        return
    idn_ma = positive(read.rcd_residual_ma)
    inputs: dict[str, object] = {"ra": ra.to_json(), "touch_voltage_v": touch_v,
                                 "earthing": earthing or "not recorded (RA implies TT)"}
    if ra.value is not None and ra.value > 0:
        inputs["max_residual_ma"] = touch_v / ra.value * _MA_PER_A
    if idn_ma is None:
        yield incomplete(CHECK, ["rcd_residual_ma"], basis=touch.basis, inputs=inputs,
                         detail="needs the RCD's IΔn to judge RA × IΔn ≤ 50 V")
    else:
        yield _touch_voltage(ra, idn_ma, touch, inputs)
    stable = derived(rules, _stable)
    side = compare_max(ra, stable.ohm)
    yield found(CHECK, Outcome.PASS if side is Side.WITHIN else Outcome.INVESTIGATE, value=ra.value,
                relation=ra.relation, limit=stable.ohm, limit_kind="max", unit="Ω",
                method="electrode_stability",
                basis=stable.basis, inputs=lambda: {"ra": ra.to_json()},
                detail=(lambda: f"RA {ra.display('Ω')} is within {stable.ohm:g} Ω") if side is Side.WITHIN
                else (lambda: f"RA {ra.display('Ω')} is not shown within {stable.ohm:g} Ω: such an electrode "
                              "may not be stable (soil drying or freezing); consider improving it"))


def _touch_voltage(ra: Reading, idn_ma: float, touch: _Touch, inputs: dict[str, object]) -> Finding:
    idn_a = idn_ma / _MA_PER_A
    raw = None if ra.value is None else ra.value * idn_a
    # a product too large for a float is over any limit: keep it as an over-range bound
    product = (Reading(value=raw, relation=ra.relation) if raw is not None and math.isfinite(raw)
               else Reading(value=None, relation=">"))
    side = compare_max(product, touch.volts)
    words = {Side.WITHIN: "within", Side.BEYOND: "above"}.get(side, "not shown within")
    return found(CHECK, _OUTCOME[side], value=product.value, relation=product.relation, limit=touch.volts,
                 limit_kind="max", unit="V", method="ra_x_idn", basis=touch.basis,
                 inputs=lambda: {**inputs, "rcd_residual_ma": idn_ma},
                 detail=lambda: f"RA {ra.display('Ω')} × IΔn {idn_ma:g} mA = {_volts(product)}, {words} "
                                f"the {touch.volts:g} V limit")
