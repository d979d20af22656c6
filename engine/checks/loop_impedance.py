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

from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from ..compiled import MISS, basis, derived, group_memo, remember
from ..context import CircuitView, Context
from ..findings import Basis, BasisParts, Finding, Inputs, found, render
from ..protection import Missing, earthing_system, positive, rule_of_thumb_limit
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ..temperature import resistance_ratio, temperature_factor
from ._compare import Side, compare_max, incomplete
from ._zs_limit import ZsLimit, zs_limit

__all__ = ["rule_of_thumb_holds", "run"]

CHECK = "loop_impedance"
_MA_PER_A = 1000.0
_THUMB_KEY = "loop_impedance.thumb"
_HOLDS_KEY = "loop_impedance.holds"
_SLACK = 1e-9  # 0.96 / 1.20 is 0.7999999999999999 in binary: the 0.8 rule holds at 10 °C


@dataclass(frozen=True, slots=True)
class _Touch:
    """Zs × IΔn ≤ 50 V (Table 41.5): the touch voltage and its basis."""

    volts: float
    basis: Basis


@dataclass(frozen=True, slots=True)
class _Thumb:
    factor: float
    basis: Basis


def _touch(rules: Ruleset) -> _Touch:
    return _Touch(volts=float(rules.value("rcd", "touch_voltage_v")),
                  basis=basis(rules, "rcd", "touch_voltage_v"))


def _thumb_rule(rules: Ruleset) -> _Thumb:
    return _Thumb(factor=float(rules.value("max_zs", "rule_of_thumb_factor")),
                  basis=basis(rules, "max_zs", "rule_of_thumb_factor"))


def _alpha(rules: Ruleset) -> float:
    return float(rules.value("temperature", "alpha_per_k"))


def _thumb(ctx: Context, max_ohm: float) -> float:
    key = (_THUMB_KEY, type(max_ohm), max_ohm)
    try:
        cached: float = ctx.memo[key]
    except KeyError:
        cached = remember(ctx.memo, key, rule_of_thumb_limit(ctx.ruleset, max_ohm))
    return cached


def rule_of_thumb_holds(view: CircuitView, rules: Ruleset, factor: float) -> str | None:
    """``None`` where factor × max covers the circuit's temperature rise, else why it does not."""
    theta_test, theta_max = view.get("test_temp_c"), view.get("insulation_temp_c")
    if theta_test is None or theta_max is None:
        return "the conductor temperatures are not known"
    return _holds(rules, factor, theta_test, theta_max)


def _holds(rules: Ruleset, factor: float, theta_test: Any, theta_max: Any) -> str | None:
    """The answer of :func:`rule_of_thumb_holds` for known temperatures: pure, kept per ruleset."""
    memo = group_memo(rules)
    key = (_HOLDS_KEY, factor, type(theta_test), theta_test, type(theta_max), theta_max)
    answer = memo.get(key, MISS)
    if answer is MISS:
        answer = remember(memo, key, _why_not(rules, factor, theta_test, theta_max))
    said: str | None = answer
    return said


def _why_not(rules: Ruleset, factor: float, theta_test: Any, theta_max: Any) -> str | None:
    window = rules.get("max_zs", "rule_of_thumb_test_temp_c")
    if window and not float(window["min"]) <= float(theta_test) <= float(window["max"]):
        return (f"it holds for tests at {float(window['min']):g}–{float(window['max']):g} °C "
                f"({rules.basis('max_zs', 'rule_of_thumb_test_temp_c')}); this test was at "
                f"{float(theta_test):g} °C")
    alpha = derived(rules, _alpha)
    whole = resistance_ratio(alpha, float(theta_test)) / resistance_ratio(alpha, float(theta_max))
    if factor > whole + _SLACK:
        return (f"{factor:g} × max does not cover the rise from {float(theta_test):g} °C to "
                f"{float(theta_max):g} °C (the whole loop may rise by 1/{whole:.3f})")
    return None


def _rcd_result(zs: Reading, idn_ma: float, rules: Ruleset, why: Any, inputs: Inputs) -> Finding:
    """Fault protection by the RCD: Zs × IΔn ≤ 50 V. ``why`` is a sentence or renders one."""
    touch = derived(rules, _touch)
    touch_v = touch.volts
    limit = touch_v / (idn_ma / _MA_PER_A)
    side = compare_max(zs, limit)
    outcome = _BY_SIDE[side]
    verdict = {Outcome.PASS: "within", Outcome.FAIL: "above"}.get(outcome, "not shown within")
    return found(CHECK, outcome, value=zs.value, relation=zs.relation, limit=limit, limit_kind="max",
                 unit="Ω", method="rcd_fault_protection", basis=touch.basis,
                 inputs=lambda: {**_built(inputs), "rcd_residual_ma": idn_ma, "touch_voltage_v": touch_v},
                 detail=lambda: f"{render(why)}; fault protection rests on the {idn_ma:g} mA RCD: Zs "
                                f"{zs.display('Ω')} is {verdict} {touch_v:g} V / IΔn = {limit:.4g} Ω")


_TT = MappingProxyType({"earthing": "TT"})  # shared, so read-only
_BY_SIDE = {Side.WITHIN: Outcome.PASS, Side.BEYOND: Outcome.FAIL, Side.UNKNOWN: Outcome.INVESTIGATE}


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    read = view.read
    zs = read.zs_ohm
    idn = positive(read.rcd_residual_ma)
    if earthing_system(read.earthing) == "TT" and idn is not None:
        if zs is None:
            yield incomplete(CHECK, ["zs_ohm"], basis=derived(rules, _touch).basis)
        else:
            yield _rcd_result(zs, idn, rules, "TT system", _TT)
        return
    limit = zs_limit(view, ctx)
    if isinstance(limit, Missing):
        reason = limit.reason
        yield incomplete(CHECK, list(limit.fields), detail=lambda: f"cannot set the maximum Zs: {reason}")
        return
    if zs is None:
        notes = limit.said
        yield incomplete(CHECK, ["zs_ohm"], basis=limit.basis, inputs=limit.figures,
                         detail=f"needs Zs to decide; {notes}" if notes else "needs Zs to decide")
        return
    yield _finish(_judge(view, ctx, zs, limit, idn), limit)


def _finish(result: Finding, limit: ZsLimit) -> Finding:
    """Say which recorded figures were refused, and never pass on a table value in doubt."""
    notes = limit.said
    said = result.detail
    if result.outcome is Outcome.PASS and limit.max_zs.doubtful and result.method != "rcd_fault_protection":
        max_zs = limit.max_zs
        return result._replace(outcome=Outcome.INVESTIGATE,
                               detail=lambda: f"{_with_notes(said, notes)}; but the table value "
                                              f"{max_zs.ohm:g} Ω is in doubt: {max_zs.doubtful}")
    return result._replace(detail=lambda: _with_notes(said, notes)) if notes else result


def _with_notes(detail: Any, notes: str) -> str:
    text = render(detail)
    return f"{text}; {notes}" if notes else text


def _judge(view: CircuitView, ctx: Context, zs: Reading, limit: ZsLimit, idn: float | None) -> Finding:
    rules = ctx.ruleset
    max_zs = limit.max_zs
    thumb_rule = derived(rules, _thumb_rule)
    factor = thumb_rule.factor
    thumb = _thumb(ctx, max_zs.ohm)
    not_used = rule_of_thumb_holds(view, rules, factor)
    figures = limit.figures

    def inputs() -> dict[str, Any]:
        out = {**figures, "rule_of_thumb_limit": thumb, "rule_of_thumb_factor": factor}
        if not_used:
            out["rule_of_thumb_not_used"] = not_used
        return out

    judged: BasisParts = (limit.basis, thumb_rule.basis) if limit.basis is not None else thumb_rule.basis
    if not_used is None and compare_max(zs, thumb) is Side.WITHIN:
        return found(CHECK, Outcome.PASS, value=zs.value, relation=zs.relation, limit=thumb, limit_kind="max",
                     unit="Ω", method="rule_of_thumb", basis=judged, inputs=inputs,
                     detail=lambda: f"Zs {zs.display('Ω')} is within {factor:g} × {max_zs.ohm:g} Ω = "
                                    f"{thumb:g} Ω ({max_zs.device})")
    side = compare_max(zs, max_zs.ohm)
    if side is not Side.WITHIN:
        if idn is not None:
            return _rcd_result(zs, idn, rules, lambda: f"Zs exceeds the {max_zs.ohm:g} Ω maximum for "
                                                       f"{max_zs.device}", inputs)
        beyond = side is Side.BEYOND
        return found(CHECK, Outcome.FAIL if beyond else Outcome.INVESTIGATE, value=zs.value,
                     relation=zs.relation, limit=max_zs.ohm, limit_kind="max", unit="Ω", method="max_zs",
                     basis=judged, inputs=inputs,
                     detail=(lambda: f"Zs {zs.display('Ω')} is above the {max_zs.ohm:g} Ω maximum for "
                                     f"{max_zs.device}") if beyond
                     else (lambda: f"the bounded reading {zs.display('Ω')} does not show Zs within "
                                   f"{max_zs.ohm:g} Ω ({max_zs.device})"))
    ze = view.read.ze_ohm
    if ze is None:
        why = (f"the rule of thumb is not used: {not_used}" if not_used
               else f"above {factor:g} × max ({thumb:g} Ω)")
        return found(CHECK, Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=thumb,
                     limit_kind="max", unit="Ω", method="rule_of_thumb", basis=judged,
                     inputs=lambda: {**inputs(), "missing": ["ze_ohm"]},
                     detail=lambda: f"Zs {zs.display('Ω')} is within the {max_zs.ohm:g} Ω maximum but {why}; "
                                    "Ze would allow the temperature-corrected check")
    return _hot(view, rules, zs, ze, limit, idn, inputs, judged)


def _hot(view: CircuitView, rules: Ruleset, zs: Reading, ze: Reading, limit: ZsLimit,
         idn: float | None, inputs: Any, judged: BasisParts) -> Finding:
    max_zs = limit.max_zs
    alpha = derived(rules, _alpha)
    temps = view.get("insulation_temp_c"), view.get("test_temp_c")
    if temps[0] is None or temps[1] is None:  # only a user ruleset without defaults lacks them
        return found(CHECK, Outcome.INCOMPLETE, value=zs.value, relation=zs.relation, limit=max_zs.ohm,
                     limit_kind="max", unit="Ω", method="temperature_corrected", basis=judged,
                     inputs=lambda: {**inputs(), "missing": ["insulation_temp_c", "test_temp_c"]},
                     detail="the temperature-corrected check needs the conductor temperatures")
    theta_max, theta_test = float(temps[0]), float(temps[1])
    assert zs.value is not None  # within the maximum, so not over range
    zs_up, ze_low = zs.value, ze.lower  # worst case: Zs_hot grows with Zs and falls with Ze
    if ze_low > zs_up or 1.0 + alpha * (theta_test - 20.0) <= 0.0:
        return found(CHECK, Outcome.INVESTIGATE, value=zs.value, relation=zs.relation, limit=max_zs.ohm,
                     limit_kind="max", unit="Ω", method="temperature_corrected", basis=judged,
                     inputs=lambda: {**inputs(), "ze": ze.to_json()},
                     detail=lambda: f"Ze {ze.display('Ω')} is above Zs {zs.display('Ω')}: the readings "
                                    "disagree")
    factor = temperature_factor(alpha, theta_max, theta_test)
    hot = ze_low + (zs_up - ze_low) * factor
    exact = zs.exact and ze.exact

    def hot_inputs() -> dict[str, Any]:
        return {**_built(inputs), "factor": factor, "ze": ze.to_json(), "zs_measured": zs.to_json(),
                "insulation_temp_c": theta_max, "test_temp_c": theta_test}

    if hot <= max_zs.ohm:
        outcome = Outcome.PASS
    elif idn is not None:
        return _rcd_result(zs, idn, rules, lambda: f"Zs corrected to {theta_max:g} °C ({hot:.4g} Ω) exceeds "
                                                   f"the {max_zs.ohm:g} Ω maximum for {max_zs.device}",
                           hot_inputs)
    else:
        outcome = Outcome.FAIL if exact else Outcome.INVESTIGATE
    word = "within" if outcome is Outcome.PASS else "above"
    return found(CHECK, outcome, value=hot, relation="=" if exact else "<", limit=max_zs.ohm,
                 limit_kind="max", unit="Ω", method="temperature_corrected", basis=judged, inputs=hot_inputs,
                 detail=lambda: f"Ze + (Zs − Ze) × {factor:.3g} = {hot:.4g} Ω at {theta_max:g} °C is {word} "
                                f"the {max_zs.ohm:g} Ω maximum for {max_zs.device}")


def _built(inputs: Inputs) -> Mapping[str, Any]:
    return inputs() if callable(inputs) else inputs
