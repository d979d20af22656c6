"""Earth fault loop impedance: measured Zs against the device's maximum (Chapter 41).

Invariants (BS 7671:2018 Reg. 411.3.2, 411.4.4, Tables 41.1–41.5; IEC 60364-4-41 411.4;
the handbook rule of thumb for measured Zs, IET OSG / GN3):
- The maximum comes from ``device_max_zs_ohm`` if given, else from the device
  tables at the disconnection time the rules give (``engine.protection``).
- Measured Zs ≤ the rule-of-thumb limit (the ruleset's ``rule_of_thumb_factor``
  × max: 0.8 in BS 7671's handbook guidance) → pass (``rule_of_thumb``; the
  factor is in ``inputs`` and in the sentence). Above it
  but ≤ max: with Ze, Zs_hot = Ze + (Zs − Ze) × F against max
  (``temperature_corrected``; Ze is not corrected, only the circuit part);
  without Ze → investigate.
- Above max (or Zs_hot above max) → fail, unless an RCD is recorded: then the
  RCD is what gives fault protection and Zs × IΔn ≤ 50 V (Table 41.5) is judged
  (``rcd_fault_protection``), and the detail says so.
- TT with an RCD: judged by the RCD condition directly. In TT the overcurrent
  device cannot normally open within 0.2 s on an electrode loop (411.5.3),
  so the tables would fail every sound TT circuit; Zs × IΔn ≤ 50 V is the
  whole-loop, conservative form of RA × IΔn ≤ 50 V (Zs ≥ RA), which the
  ``earth_electrode`` check judges on its own.
- Bounded readings keep their bound: a worst case is taken (the largest Zs,
  the smallest Ze), and a bound that settles nothing gives ``investigate``.
- Missing device data → ``incomplete`` naming every field that would help.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ..context import CircuitView, Context
from ..protection import (
    Device,
    MaxZs,
    Missing,
    disconnection_time,
    earthing_system,
    max_zs_for,
    positive,
    resolve_device,
    rule_of_thumb_limit,
)
from ..readings import Reading
from ..results import CheckResult, Outcome
from ..ruleset import Ruleset
from ..temperature import temperature_factor
from ._compare import Side, compare_max, incomplete

__all__ = ["run"]

CHECK = "loop_impedance"
_MA_PER_A = 1000.0


# Keys of this check's entries in ctx.cache (per verify call, so nothing outlives the ruleset).
# resolve_device, max_zs_for and rule_of_thumb_limit are pure functions of the ruleset and
# their arguments; a board repeats a few devices, and recomputing them per circuit (Decimal
# arithmetic, standard matching) was a sixth of verify()'s time (tests/bench). Numbers enter
# the keys with their type, so 32 and 32.0 never share an entry even though they compare equal.
_DEVICE_KEY = "loop_impedance.device"
_MAX_ZS_KEY = "loop_impedance.max_zs"
_THUMB_KEY = "loop_impedance.thumb"


def _typed(value: object) -> tuple[type, object]:
    return (type(value), value)


def _device(ctx: Context, view: CircuitView) -> Device | Missing:
    raw = (view.raw("device_kind"), view.raw("device_standard"), view.raw("device_curve"),
           view.raw("device_rating_a"))
    key = (_DEVICE_KEY, *map(_typed, raw))
    try:
        cached: Device | Missing = ctx.cache[key]
    except KeyError:
        cached = ctx.cache[key] = resolve_device(ctx.ruleset, kind=raw[0], standard=raw[1],
                                                 curve=raw[2], rating_a=raw[3])
    except TypeError:  # an unhashable value: compute without the cache
        return resolve_device(ctx.ruleset, kind=raw[0], standard=raw[1], curve=raw[2],
                              rating_a=raw[3])
    return cached


def _table_max_zs(ctx: Context, device: Device, u0: float, seconds: float) -> MaxZs | Missing:
    key = (_MAX_ZS_KEY, device, _typed(device.rating_a), _typed(u0), _typed(seconds))
    try:
        cached: MaxZs | Missing = ctx.cache[key]
    except KeyError:
        cached = ctx.cache[key] = max_zs_for(ctx.ruleset, device, u0, seconds)
    return cached


def _thumb(ctx: Context, max_ohm: float) -> float:
    key = (_THUMB_KEY, _typed(max_ohm))
    try:
        cached: float = ctx.cache[key]
    except KeyError:
        cached = ctx.cache[key] = rule_of_thumb_limit(ctx.ruleset, max_ohm)
    return cached


def _thumb_factor(rules: Ruleset) -> float:
    return float(rules.value("max_zs", "rule_of_thumb_factor"))


def _max_zs(view: CircuitView, ctx: Context) -> tuple[MaxZs | Missing, float | None]:
    """The maximum Zs and the disconnection time it was taken for."""
    rules = ctx.ruleset
    override = positive(view.raw("device_max_zs_ohm"))
    if override is not None:
        return MaxZs(ohm=override, basis="record: device_max_zs_ohm (designer's or maker's figure)",
                     device="as recorded"), None
    device = _device(ctx, view)
    timing = disconnection_time(view, rules)
    if isinstance(device, Missing) or isinstance(timing, Missing):
        fields = [f for m in (device, timing) if isinstance(m, Missing) for f in m.fields]
        reasons = "; ".join(m.reason for m in (device, timing) if isinstance(m, Missing))
        if "device_max_zs_ohm" not in fields:
            fields.append("device_max_zs_ohm")
        return Missing(fields=tuple(dict.fromkeys(fields)), reason=reasons), None
    u0 = positive(view.get("nominal_voltage_v"))
    if u0 is None:
        return Missing(fields=("nominal_voltage_v",), reason="U0 sets the maximum Zs"), None
    return _table_max_zs(ctx, device, u0, timing.seconds), timing.seconds


def _inputs(limit: MaxZs, seconds: float | None, **extra: Any) -> dict[str, Any]:
    out: dict[str, Any] = {"max_zs": limit.ohm, "disconnection_s": seconds, "device": limit.device,
                           "max_zs_basis": limit.basis}
    if limit.table_s is not None:
        out["table_s"] = limit.table_s
    if limit.formula:
        out["max_zs_formula"] = limit.formula
    out.update(extra)
    return out


def _rcd_result(zs: Reading, idn_ma: float, rules: Ruleset, why: str,
                inputs: dict[str, Any]) -> CheckResult:
    touch_v = float(rules.value("rcd", "touch_voltage_v"))
    limit = touch_v / (idn_ma / _MA_PER_A)
    side = compare_max(zs, limit)
    outcome = {Side.WITHIN: Outcome.PASS, Side.BEYOND: Outcome.FAIL}.get(side, Outcome.INVESTIGATE)
    verdict = {Outcome.PASS: "within", Outcome.FAIL: "above"}.get(outcome, "not shown within")
    return CheckResult(
        check=CHECK, outcome=outcome, value=zs.value, relation=zs.relation, limit=limit,
        limit_kind="max", unit="Ω", method="rcd_fault_protection",
        basis=rules.basis("rcd", "touch_voltage_v"),
        inputs={**inputs, "rcd_residual_ma": idn_ma, "touch_voltage_v": touch_v},
        detail=f"{why}; fault protection rests on the {idn_ma:g} mA RCD: Zs {zs.display('Ω')} is "
               f"{verdict} {touch_v:g} V / IΔn = {limit:.4g} Ω",
    )


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    rules = ctx.ruleset
    zs = view.reading("zs_ohm")
    idn = positive(view.raw("rcd_residual_ma"))
    if earthing_system(view.raw("earthing")) == "TT" and idn is not None:
        if zs is None:
            yield incomplete(CHECK, ["zs_ohm"], basis=rules.basis("rcd", "touch_voltage_v"))
        else:
            yield _rcd_result(zs, idn, rules, "TT system", {"earthing": "TT"})
        return
    limit, seconds = _max_zs(view, ctx)
    if isinstance(limit, Missing):
        yield incomplete(CHECK, list(limit.fields), detail=f"cannot set the maximum Zs: {limit.reason}")
        return
    if zs is None:
        yield incomplete(CHECK, ["zs_ohm"], basis=limit.basis, inputs=_inputs(limit, seconds))
        return
    yield _judge(view, ctx, zs, limit, seconds, idn)


def _judge(view: CircuitView, ctx: Context, zs: Reading, limit: MaxZs, seconds: float | None,
           idn: float | None) -> CheckResult:
    rules = ctx.ruleset
    thumb = _thumb(ctx, limit.ohm)
    factor = _thumb_factor(rules)
    inputs = _inputs(limit, seconds, rule_of_thumb_limit=thumb, rule_of_thumb_factor=factor)
    basis = f"{limit.basis}; {rules.basis('max_zs', 'rule_of_thumb_factor')}"
    common: dict[str, Any] = {"check": CHECK, "unit": "Ω", "limit_kind": "max", "basis": basis}
    if compare_max(zs, thumb) is Side.WITHIN:
        return CheckResult(outcome=Outcome.PASS, value=zs.value, relation=zs.relation, limit=thumb,
                           method="rule_of_thumb", inputs=inputs, **common,
                           detail=f"Zs {zs.display('Ω')} is within {factor:g} × {limit.ohm:g} Ω = "
                                  f"{thumb:g} Ω ({limit.device})")
    side = compare_max(zs, limit.ohm)
    if side is not Side.WITHIN:
        if idn is not None:
            return _rcd_result(zs, idn, rules, f"Zs exceeds the {limit.ohm:g} Ω maximum for "
                               f"{limit.device}", inputs)
        beyond = side is Side.BEYOND
        return CheckResult(
            outcome=Outcome.FAIL if beyond else Outcome.INVESTIGATE, value=zs.value,
            relation=zs.relation, limit=limit.ohm, method="max_zs", inputs=inputs, **common,
            detail=f"Zs {zs.display('Ω')} is above the {limit.ohm:g} Ω maximum for {limit.device}"
            if beyond else f"the bounded reading {zs.display('Ω')} does not show Zs within "
                           f"{limit.ohm:g} Ω ({limit.device})")
    ze = view.reading("ze_ohm")
    if ze is None:
        return CheckResult(
            outcome=Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=thumb,
            method="rule_of_thumb", inputs={**inputs, "missing": ["ze_ohm"]}, **common,
            detail=f"Zs {zs.display('Ω')} is within the {limit.ohm:g} Ω maximum but above "
                   f"{factor:g} × max ({thumb:g} Ω); ze_ohm would allow the temperature-corrected check")
    return _hot(view, rules, zs, ze, limit, idn, inputs, common)


def _hot(view: CircuitView, rules: Ruleset, zs: Reading, ze: Reading, limit: MaxZs,
         idn: float | None, inputs: dict[str, Any], common: dict[str, Any]) -> CheckResult:
    alpha = float(rules.value("temperature", "alpha_per_k"))
    temps = view.get("insulation_temp_c"), view.get("test_temp_c")
    if temps[0] is None or temps[1] is None:  # only a user ruleset without defaults lacks them
        return CheckResult(outcome=Outcome.INCOMPLETE, value=zs.value, relation=zs.relation,
                           limit=limit.ohm, method="temperature_corrected", **common,
                           inputs={**inputs, "missing": ["insulation_temp_c", "test_temp_c"]},
                           detail="the temperature-corrected check needs the conductor temperatures")
    theta_max, theta_test = float(temps[0]), float(temps[1])
    assert zs.value is not None  # within the maximum, so not over range
    zs_up, ze_low = zs.value, ze.lower  # worst case: Zs_hot grows with Zs and falls with Ze
    if ze_low > zs_up or 1.0 + alpha * (theta_test - 20.0) <= 0.0:
        return CheckResult(
            outcome=Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=limit.ohm,
            method="temperature_corrected", inputs={**inputs, "ze": ze.to_json()}, **common,
            detail=f"Ze {ze.display('Ω')} is above Zs {zs.display('Ω')}: the readings disagree")
    factor = temperature_factor(alpha, theta_max, theta_test)
    hot = ze_low + (zs_up - ze_low) * factor
    exact = zs.exact and ze.exact
    inputs = {**inputs, "factor": factor, "ze": ze.to_json(), "zs_measured": zs.to_json(),
              "insulation_temp_c": theta_max, "test_temp_c": theta_test}
    if hot <= limit.ohm:
        outcome = Outcome.PASS
    elif idn is not None:
        return _rcd_result(zs, idn, rules, f"Zs corrected to {theta_max:g} °C ({hot:.4g} Ω) exceeds "
                           f"the {limit.ohm:g} Ω maximum for {limit.device}", inputs)
    else:
        outcome = Outcome.FAIL if exact else Outcome.INVESTIGATE
    word = "within" if outcome is Outcome.PASS else "above"
    return CheckResult(
        outcome=outcome, value=hot, relation="=" if exact else "<", limit=limit.ohm,
        method="temperature_corrected", inputs=inputs, **common,
        detail=f"Ze + (Zs − Ze) × {factor:.3g} = {hot:.4g} Ω at {theta_max:g} °C is {word} the "
               f"{limit.ohm:g} Ω maximum for {limit.device}")
