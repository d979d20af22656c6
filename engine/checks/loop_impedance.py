"""Earth fault loop impedance: measured Zs against the device's maximum (Chapter 41).

Invariants (BS 7671:2018 Reg. 411.3.2, 411.4.4, 411.8, Tables 41.1–41.6; IEC 60364-4-41 411.4;
the handbook rule of thumb for measured Zs, IET OSG / GN3; IEC 60364-6 Annex C):
- The maximum is :func:`engine.checks._zs_limit.zs_limit`'s: the device tables
  at the regulation's time, the record's own figures tightening it only. A
  refused figure is named in ``inputs`` (``*_refused``) and in the sentence.
- Rule of thumb: Zs ≤ the ruleset's ``rule_of_thumb_factor`` × max → pass
  (``rule_of_thumb``; 0.8 under BS 7671, 2/3 under IEC 60364-6 Annex C). It is
  used only where it holds: the test temperature within the ruleset's window
  (BS: 10–20 °C) and the factor no larger than the whole-loop temperature
  factor (1 + α(θtest − 20)) / (1 + α(θmax − 20)) (derived: 0.8 covers 70 °C
  cable tested at 10 °C or warmer, not 90 °C cable). Elsewhere the full
  correction decides, and ``inputs["rule_of_thumb_not_used"]`` says why.
- Above the rule (or where it does not hold) but ≤ max: with Ze,
  Zs_hot = Ze + (Zs − Ze) × F against max (``temperature_corrected``; Ze is not
  corrected, only the circuit part); without Ze → investigate.
- Above max (or Zs_hot above max) → fail, unless an RCD is recorded: then the
  RCD is what gives fault protection and Zs × IΔn ≤ 50 V (Table 41.5) is judged
  (``rcd_fault_protection``), and the detail says so.
- TT with an RCD: judged by the RCD condition directly. In TT the overcurrent
  device cannot normally open within 0.2 s on an electrode loop (411.5.3),
  so the tables would fail every sound TT circuit; Zs × IΔn ≤ 50 V is the
  whole-loop, conservative form of RA × IΔn ≤ 50 V (Zs ≥ RA), which the
  ``earth_electrode`` check judges on its own.
- A table value the ruleset marks doubtful may fail a circuit, never pass it:
  what would pass is ``investigate``.
- Bounded readings keep their bound: a worst case is taken (the largest Zs,
  the smallest Ze), and a bound that settles nothing gives ``investigate``.
- Missing device data → ``incomplete`` naming every field that would help.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import replace
from typing import Any

from ..context import CircuitView, Context
from ..protection import Missing, earthing_system, positive, rule_of_thumb_limit
from ..readings import Reading
from ..results import CheckResult, Outcome
from ..ruleset import Ruleset
from ..temperature import resistance_ratio, temperature_factor
from ._compare import Side, compare_max, incomplete
from ._zs_limit import ZsLimit, zs_limit

__all__ = ["rule_of_thumb_holds", "run"]

CHECK = "loop_impedance"
_MA_PER_A = 1000.0
_THUMB_KEY = "loop_impedance.thumb"
_SLACK = 1e-9  # 0.96 / 1.20 is 0.7999999999999999 in binary: the 0.8 rule holds at 10 °C


def _thumb(ctx: Context, max_ohm: float) -> float:
    key = (_THUMB_KEY, type(max_ohm), max_ohm)
    try:
        cached: float = ctx.cache[key]
    except KeyError:
        cached = ctx.cache[key] = rule_of_thumb_limit(ctx.ruleset, max_ohm)
    return cached


def rule_of_thumb_holds(view: CircuitView, rules: Ruleset, factor: float) -> str | None:
    """``None`` where factor × max covers the circuit's temperature rise, else why it does not."""
    theta_test, theta_max = view.get("test_temp_c"), view.get("insulation_temp_c")
    if theta_test is None or theta_max is None:
        return "the conductor temperatures are not known"
    window = rules.get("max_zs", "rule_of_thumb_test_temp_c")
    if window and not float(window["min"]) <= float(theta_test) <= float(window["max"]):
        return (f"it holds for tests at {float(window['min']):g}–{float(window['max']):g} °C "
                f"({rules.basis('max_zs', 'rule_of_thumb_test_temp_c')}); this test was at "
                f"{float(theta_test):g} °C")
    alpha = float(rules.value("temperature", "alpha_per_k"))
    whole = resistance_ratio(alpha, float(theta_test)) / resistance_ratio(alpha, float(theta_max))
    if factor > whole + _SLACK:
        return (f"{factor:g} × max does not cover the rise from {float(theta_test):g} °C to "
                f"{float(theta_max):g} °C (the whole loop may rise by 1/{whole:.3f})")
    return None


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
    limit = zs_limit(view, ctx)
    if isinstance(limit, Missing):
        yield incomplete(CHECK, list(limit.fields), detail=f"cannot set the maximum Zs: {limit.reason}")
        return
    if zs is None:
        notes = limit.notes()
        yield incomplete(CHECK, ["zs_ohm"], basis=limit.max_zs.basis, inputs=limit.inputs(),
                         detail=f"needs Zs to decide{'; ' + notes if notes else ''}")
        return
    yield _finish(_judge(view, ctx, zs, limit, idn), limit)


def _finish(result: CheckResult, limit: ZsLimit) -> CheckResult:
    """Say which recorded figures were refused, and never pass on a table value in doubt."""
    notes = limit.notes()
    detail = f"{result.detail}; {notes}" if notes else result.detail
    if result.outcome is Outcome.PASS and limit.max_zs.doubtful and result.method != "rcd_fault_protection":
        return replace(result, outcome=Outcome.INVESTIGATE,
                       detail=f"{detail}; but the table value {limit.max_zs.ohm:g} Ω is in doubt: "
                              f"{limit.max_zs.doubtful}")
    return replace(result, detail=detail) if notes else result


def _judge(view: CircuitView, ctx: Context, zs: Reading, limit: ZsLimit, idn: float | None) -> CheckResult:
    rules = ctx.ruleset
    max_zs = limit.max_zs
    factor = float(rules.value("max_zs", "rule_of_thumb_factor"))
    thumb = _thumb(ctx, max_zs.ohm)
    not_used = rule_of_thumb_holds(view, rules, factor)
    inputs = {**limit.inputs(), "rule_of_thumb_limit": thumb, "rule_of_thumb_factor": factor}
    if not_used:
        inputs["rule_of_thumb_not_used"] = not_used
    basis = f"{max_zs.basis}; {rules.basis('max_zs', 'rule_of_thumb_factor')}"
    common: dict[str, Any] = {"check": CHECK, "unit": "Ω", "limit_kind": "max", "basis": basis}
    if not_used is None and compare_max(zs, thumb) is Side.WITHIN:
        return CheckResult(outcome=Outcome.PASS, value=zs.value, relation=zs.relation, limit=thumb,
                           method="rule_of_thumb", inputs=inputs, **common,
                           detail=f"Zs {zs.display('Ω')} is within {factor:g} × {max_zs.ohm:g} Ω = "
                                  f"{thumb:g} Ω ({max_zs.device})")
    side = compare_max(zs, max_zs.ohm)
    if side is not Side.WITHIN:
        if idn is not None:
            return _rcd_result(zs, idn, rules, f"Zs exceeds the {max_zs.ohm:g} Ω maximum for "
                               f"{max_zs.device}", inputs)
        beyond = side is Side.BEYOND
        return CheckResult(
            outcome=Outcome.FAIL if beyond else Outcome.INVESTIGATE, value=zs.value,
            relation=zs.relation, limit=max_zs.ohm, method="max_zs", inputs=inputs, **common,
            detail=f"Zs {zs.display('Ω')} is above the {max_zs.ohm:g} Ω maximum for {max_zs.device}"
            if beyond else f"the bounded reading {zs.display('Ω')} does not show Zs within "
                           f"{max_zs.ohm:g} Ω ({max_zs.device})")
    ze = view.reading("ze_ohm")
    if ze is None:
        why = (f"the rule of thumb is not used: {not_used}" if not_used
               else f"above {factor:g} × max ({thumb:g} Ω)")
        return CheckResult(
            outcome=Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=thumb,
            method="rule_of_thumb", inputs={**inputs, "missing": ["ze_ohm"]}, **common,
            detail=f"Zs {zs.display('Ω')} is within the {max_zs.ohm:g} Ω maximum but {why}; Ze "
                   "would allow the temperature-corrected check")
    return _hot(view, rules, zs, ze, limit, idn, inputs, common)


def _hot(view: CircuitView, rules: Ruleset, zs: Reading, ze: Reading, limit: ZsLimit,
         idn: float | None, inputs: dict[str, Any], common: dict[str, Any]) -> CheckResult:
    max_zs = limit.max_zs
    alpha = float(rules.value("temperature", "alpha_per_k"))
    temps = view.get("insulation_temp_c"), view.get("test_temp_c")
    if temps[0] is None or temps[1] is None:  # only a user ruleset without defaults lacks them
        return CheckResult(outcome=Outcome.INCOMPLETE, value=zs.value, relation=zs.relation,
                           limit=max_zs.ohm, method="temperature_corrected", **common,
                           inputs={**inputs, "missing": ["insulation_temp_c", "test_temp_c"]},
                           detail="the temperature-corrected check needs the conductor temperatures")
    theta_max, theta_test = float(temps[0]), float(temps[1])
    assert zs.value is not None  # within the maximum, so not over range
    zs_up, ze_low = zs.value, ze.lower  # worst case: Zs_hot grows with Zs and falls with Ze
    if ze_low > zs_up or 1.0 + alpha * (theta_test - 20.0) <= 0.0:
        return CheckResult(
            outcome=Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=max_zs.ohm,
            method="temperature_corrected", inputs={**inputs, "ze": ze.to_json()}, **common,
            detail=f"Ze {ze.display('Ω')} is above Zs {zs.display('Ω')}: the readings disagree")
    factor = temperature_factor(alpha, theta_max, theta_test)
    hot = ze_low + (zs_up - ze_low) * factor
    exact = zs.exact and ze.exact
    inputs = {**inputs, "factor": factor, "ze": ze.to_json(), "zs_measured": zs.to_json(),
              "insulation_temp_c": theta_max, "test_temp_c": theta_test}
    if hot <= max_zs.ohm:
        outcome = Outcome.PASS
    elif idn is not None:
        return _rcd_result(zs, idn, rules, f"Zs corrected to {theta_max:g} °C ({hot:.4g} Ω) exceeds "
                           f"the {max_zs.ohm:g} Ω maximum for {max_zs.device}", inputs)
    else:
        outcome = Outcome.FAIL if exact else Outcome.INVESTIGATE
    word = "within" if outcome is Outcome.PASS else "above"
    return CheckResult(
        outcome=outcome, value=hot, relation="=" if exact else "<", limit=max_zs.ohm,
        method="temperature_corrected", inputs=inputs, **common,
        detail=f"Ze + (Zs − Ze) × {factor:.3g} = {hot:.4g} Ω at {theta_max:g} °C is {word} the "
               f"{max_zs.ohm:g} Ω maximum for {max_zs.device}")
