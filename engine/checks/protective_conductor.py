"""Protective conductor size: Table 54.7's minimum, else the adiabatic equation S ≥ √(I²t)/k (Reg. 543.1).

Invariants (BS 7671:2018 Reg. 543.1.1, 543.1.3, 543.1.4, Tables 54.3 and 54.7; IEC 60364-5-54
543.1.2, 543.1.3, Tables 54.2 and A.54.3; the figures are the ruleset's ``protective_conductor``):
- Applies where the record describes the cable (``cpc_mm2`` or ``line_mm2``);
  without the cpc's size it is ``incomplete``.
- ``table_minimum``: a cpc of the line's material at least as large as the
  table asks (S up to 16 mm², 16 mm² up to 35 mm², S/2 above) passes.
- ``adiabatic`` where it is smaller (twin-and-earth's reduced cpc) or the line
  size is unknown: the fault current I = U0 / Zs (an exact Zs reading), and
  the device's opening time at I bounded from the ruleset's own tables
  (:mod:`engine.protection.operating_time`): a breaker at the top of its
  instantaneous band opens within 0.1 s, a fuse within t where I reaches the
  Ia of its t-second table; an RCD recorded with IΔn opens within its
  product standard's time (300 ms at IΔn, 40 ms at 5 IΔn; type S or
  unrecorded: 500 / 150 ms). k from Table 54.3 by the insulation's
  maximum temperature and the conductor metal.
  * S ≥ √(I² t_upper)/k → pass;
  * S < √(I² t_lower)/k (the time is at least t_lower: a fuse below a table
    point) → fail;
  * in between, or where no table bounds the time → ``investigate`` (the
    maker's let-through energy decides; a breaker's energy is well below
    I² × 0.1 s), never pass.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from typing import Any

from ..compiled import MISS, basis, remember
from ..context import CircuitView, Context
from ..findings import Basis, BasisParts, Finding, found
from ..protection import Device, time_bounds
from ..readings import format_number
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import incomplete
from ._zs_limit import circuit_device

__all__ = ["run", "table_minimum_mm2"]

CHECK = "protective_conductor"
SECTION = "protective_conductor"
_MS_PER_S = 1000.0
_MA_PER_A = 1000.0


def table_minimum_mm2(rules: Ruleset, line_mm2: float) -> float:
    """The smallest cpc of the line's material the table allows for a line of ``line_mm2``."""
    rule: dict[str, float] = rules.value(SECTION, "table_minimum")
    if line_mm2 <= float(rule["same_up_to_mm2"]):
        return line_mm2
    if line_mm2 <= float(rule["fixed_up_to_mm2"]):
        return float(rule["fixed_mm2"])
    return line_mm2 * float(rule["fraction_above"])


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    if not (view.has("cpc_mm2") or view.has("line_mm2")):
        return
    rules = ctx.ruleset
    read = view.read
    cpc, line = read.cpc_mm2, read.line_mm2
    table = basis(rules, SECTION, "table_minimum")
    if cpc is None:
        yield incomplete(CHECK, ["cpc_mm2"], basis=table, detail="needs the cpc size")
        return
    cpc = float(cpc)
    inputs: dict[str, Any] = {"cpc_mm2": cpc}
    if line is not None:
        line_mm2 = float(line)
        need = table_minimum_mm2(rules, line_mm2)
        inputs.update(line_mm2=line_mm2, table_minimum_mm2=need)
        if cpc >= need:
            yield found(CHECK, Outcome.PASS, value=cpc, limit=need, limit_kind="min", unit="mm²",
                        method="table_minimum", basis=table, inputs=inputs,
                        detail=lambda: f"cpc {cpc:g} mm² meets the {need:g} mm² the table asks for a "
                                       f"{line_mm2:g} mm² line")
            return
    yield _adiabatic(view, ctx, cpc, inputs)


def _k(view: CircuitView, ctx: Context) -> tuple[float, Basis] | None:
    material = str(view.get("conductor_material"))
    insulation = view.get("insulation_temp_c")
    key = ("protective_conductor.k", material, insulation if insulation is None else float(insulation))
    found = ctx.memo.get(key, MISS)
    if found is MISS:
        found = remember(ctx.memo, key, _k_of(ctx.ruleset, material, insulation))
    k: tuple[float, Basis] | None = found
    return k


def _k_of(rules: Ruleset, material: str, insulation: Any) -> tuple[float, Basis] | None:
    table: dict[str, float] = rules.get(SECTION, f"k_{material}", {}) or {}
    found_k = table.get(format_number(float(insulation))) if insulation is not None else None
    if found_k is None:
        return None
    return float(found_k), basis(rules, SECTION, f"k_{material}")


def _rcd_upper(view: CircuitView, rules: Ruleset, current_a: float) -> float | None:
    read = view.read
    idn = read.rcd_residual_ma
    if idn is None:
        return None
    kind = "general" if read.rcd_delayed is False else "delayed"
    idn_a = float(idn) / _MA_PER_A
    for multiple, suffix in ((5.0, "at_5idn"), (1.0, "at_idn")):
        if current_a >= multiple * idn_a:
            return float(rules.value("rcd", f"{kind}_max_ms_{suffix}")) / _MS_PER_S
    return None


def _adiabatic(view: CircuitView, ctx: Context, cpc: float, inputs: dict[str, Any]) -> Finding:
    rules = ctx.ruleset
    adiabatic = basis(rules, SECTION, "adiabatic_max_s")
    smaller = "below the table's minimum" if "table_minimum_mm2" in inputs else "of a line size not recorded"
    zs, u0 = view.read.zs_ohm, view.get("nominal_voltage_v")
    if zs is None or not zs.exact or zs.value is None or u0 is None:
        return incomplete(CHECK, ["zs_ohm"], basis=adiabatic, inputs=inputs,
                          detail=lambda: f"cpc {cpc:g} mm² is {smaller}: the adiabatic check needs an exact "
                                         "Zs")
    k = _k(view, ctx)
    if k is None:
        return incomplete(CHECK, ["insulation_temp_c"], basis=adiabatic, inputs=inputs,
                          detail="the ruleset has no k for this conductor's insulation and metal")
    current = float(u0) / zs.value
    device = circuit_device(view, ctx)
    bounds = time_bounds(rules, device, current) if isinstance(device, Device) else None
    upper = bounds.upper if bounds is not None else None
    lower = bounds.lower if bounds is not None else 0.0
    rcd = _rcd_upper(view, rules, current)
    if rcd is not None:
        upper = rcd if upper is None else min(upper, rcd)
    if upper is not None and upper > float(rules.value(SECTION, "adiabatic_max_s")):
        upper = None
    k_value = k[0]
    inputs = {**inputs, "fault_current_a": current, "k": k_value, "time_upper_s": upper,
              "time_lower_s": lower, "zs_ohm": zs.value, "u0_v": float(u0)}
    rule: BasisParts = (adiabatic, k[1], bounds.basis) if bounds is not None and bounds.basis \
        else (adiabatic, k[1])
    need_lower = math.sqrt(current * current * lower) / k_value
    if upper is not None:
        need = math.sqrt(current * current * upper) / k_value
        inputs["minimum_mm2"] = need
        if cpc >= need:
            return found(CHECK, Outcome.PASS, value=cpc, limit=need, limit_kind="min", unit="mm²",
                         method="adiabatic", basis=rule, inputs=inputs,
                         detail=lambda: f"cpc {cpc:g} mm² ≥ √(I²t)/k = √({current:.4g}² × {upper:g})/"
                                        f"{k_value:g} = {need:.3g} mm² (I = U0/Zs, t within {upper:g} s)")
    if cpc < need_lower:
        return found(CHECK, Outcome.FAIL, value=cpc, limit=need_lower, limit_kind="min", unit="mm²",
                     method="adiabatic", basis=rule, inputs=inputs,
                     detail=lambda: f"cpc {cpc:g} mm² < √(I²t)/k = √({current:.4g}² × {lower:g})/"
                                    f"{k_value:g} = {need_lower:.3g} mm²: at {current:.4g} A the device "
                                    f"takes more than {lower:g} s")
    minimum = inputs.get("minimum_mm2")

    def why() -> str:
        return (f"needs {minimum:.3g} mm² if the device takes its full {upper:g} s" if upper is not None
                else f"the tables do not bound the device's time at {current:.4g} A")

    return found(CHECK, Outcome.INVESTIGATE, value=cpc, limit=minimum,
                 limit_kind="min" if upper is not None else None, unit="mm²", method="adiabatic", basis=rule,
                 inputs=inputs,
                 detail=lambda: f"cpc {cpc:g} mm² is {smaller} and {why()}: the maker's let-through energy "
                                "(I²t) decides")
