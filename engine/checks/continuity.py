"""Continuity: R1+R2 (and R2 where measured) present and plausible for the cable.

Invariants:
- Applies to every circuit: continuity of protective conductors is verified
  on all of them (BS 7671 643.2.1 / IEC 60364-6 6.4.3.2). No R1+R2 →
  ``incomplete``; for a ring the detail gives (r1 + r2)/4 from the end-to-end
  readings as the value R1+R2 should show.
- Over range (``OL``) R1+R2 or R2 → ``fail``: the circuit's line or protective
  conductor is open.
- Expected value, with line and cpc sizes and ``length_m``: (r_line + r_cpc) × L
  from the IEC 60228 maxima corrected to the test temperature (Annex B
  coefficient, see ``engine.conductors``). For a ring, ``length_m`` is the
  length of the whole ring and R1+R2 at its mid-point is (r_line + r_cpc) × L / 4.
- Above ``expected_ratio`` × expected + ``expected_offset_ohm`` (1.25 × + 0.05 Ω,
  ohmtally's choice, common practice, ``continuity.json``) → ``investigate``: a poor termination, a
  longer route or a smaller conductor than recorded. Below ``low_ratio`` ×
  expected − offset → ``investigate`` too: a wrong length or size, or parallel
  earth paths that would hide a broken cpc. Neither is a fail: the limit
  that matters to safety is Zs (``loop_impedance``).
- Measured R2 must not exceed R1+R2 (it is part of it): if it does the
  readings are mis-recorded → ``investigate``; R2 is also judged against
  r_cpc × L by the same rule.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from ..compiled import basis, derived
from ..conductors import area, resistance_at_test_temp
from ..context import CircuitView, Context
from ..findings import Basis, Detail, Finding, found
from ..plausibility import Withheld
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import Side, compare_max, incomplete

__all__ = ["expected_resistance", "run"]

CHECK = "continuity"


@dataclass(frozen=True, slots=True)
class _Band:
    """The ruleset's band around the expected value (read where the comparison first needs it)."""

    ratio: float
    offset: float
    low_ratio: float


def _band(rules: Ruleset) -> _Band:
    return _Band(ratio=float(rules.value(CHECK, "expected_ratio")),
                 offset=float(rules.value(CHECK, "expected_offset_ohm")),
                 low_ratio=float(rules.value(CHECK, "low_ratio")))


def _ring_divisor(rules: Ruleset) -> float:
    return float(rules.value("ring_continuity", "mid_point_divisor"))


def expected_resistance(view: CircuitView, *,
                        include_line: bool = True) -> tuple[float, dict[str, Any]] | None:
    """Expected R1+R2 (or R2 alone) at the test temperature, with how it was found."""
    read = view.read
    length = read.length_m
    line, cpc = area(read.line_mm2), area(read.cpc_mm2)
    if length is None or cpc is None or (include_line and line is None):
        return None
    material = str(view.get("conductor_material"))
    theta = float(view.get("test_temp_c"))
    r_cpc = resistance_at_test_temp(view.ruleset, material, cpc, theta)
    r_line = resistance_at_test_temp(view.ruleset, material, line, theta) if include_line else 0.0
    if r_cpc is None or r_line is None:
        return None
    ring = view.get("circuit_form") == "ring"
    divisor = derived(view.ruleset, _ring_divisor) if ring else 1.0
    expected = (r_line + r_cpc) * float(length) / divisor
    how: dict[str, Any] = {"expected_ohm": expected, "length_m": float(length), "test_temp_c": theta,
                           "material": material, "r_cpc_ohm_per_m": r_cpc}
    if include_line:
        how["r_line_ohm_per_m"] = r_line
    if ring:
        how["ring_mid_point"] = True
    return expected, how


def _plausibility(view: CircuitView, name: str, reading: Reading,
                  expected: tuple[float, dict[str, Any]] | None) -> tuple[Outcome, Detail, dict[str, Any],
                                                                            float | None]:
    """(outcome, sentence, inputs, threshold) for one reading against its expected value."""
    if expected is None:
        if reading.relation == ">":
            return (Outcome.INVESTIGATE, lambda: f"{name} {reading.display('Ω')} is bounded: continuity is "
                    "not shown", {}, None)
        return (Outcome.PASS, lambda: f"{name} {reading.display('Ω')} recorded; give the length, line size "
                "and cpc size to compare it with IEC 60228", {"expected_ohm": None}, None)
    value, how = expected
    band = derived(view.ruleset, _band)
    ratio, offset, low_ratio = band.ratio, band.offset, band.low_ratio
    threshold = ratio * value + offset
    low = low_ratio * value - offset
    inputs = {**how, "threshold_ohm": threshold, "low_ohm": low}
    if reading.value is not None and value > 0:
        inputs["ratio"] = reading.value / value
    side = compare_max(reading, threshold)
    if side is Side.BEYOND:
        return (Outcome.INVESTIGATE, lambda: f"{name} {reading.display('Ω')} is above {ratio:g} × the "
                f"expected {value:.3g} Ω + {offset:g} Ω = {threshold:.3g} Ω: check terminations, the length "
                "and the sizes", inputs, threshold)
    if side is Side.UNKNOWN:
        return (Outcome.INVESTIGATE, lambda: f"{name} {reading.display('Ω')} is bounded and does not show it "
                f"is within {threshold:.3g} Ω", inputs, threshold)
    if reading.value is not None and reading.value < low:
        return (Outcome.INVESTIGATE, lambda: f"{name} {reading.display('Ω')} is below {low_ratio:g} × the "
                f"expected {value:.3g} Ω − {offset:g} Ω: check the recorded length and sizes, and for "
                "parallel earth paths that would hide a broken cpc", inputs, threshold)
    return (Outcome.PASS, lambda: f"{name} {reading.display('Ω')} agrees with the expected {value:.3g} Ω "
            f"from IEC 60228 (at most {threshold:.3g} Ω)", inputs, threshold)


def _result(name_method: str, reading: Reading, outcome: Outcome, detail: Detail, inputs: dict[str, Any],
            threshold: float | None, requirement: Basis) -> Finding:
    return found(CHECK, outcome, value=reading.value, relation=reading.relation, limit=threshold,
                 limit_kind="max" if threshold is not None else None, unit="Ω", method=name_method,
                 basis=requirement, detail=detail, inputs=inputs)


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    requirement = basis(ctx.ruleset, CHECK, "requirement")
    try:  # R1+R2 and R2 are two judgements: one withheld never hides the other
        r1r2 = view.read.r1_r2_ohm
    except Withheld as exc:
        yield exc.result(CHECK, view.record.key)
        r1r2 = None
    else:
        yield _judge_r1r2(view, r1r2, requirement)
    try:
        r2 = view.read.r2_ohm
    except Withheld as exc:
        yield exc.result(CHECK, view.record.key)
        return
    if r2 is not None:
        yield _judge_r2(view, r2, r1r2, requirement)


def _judge_r1r2(view: CircuitView, r1r2: Reading | None, requirement: Basis) -> Finding:
    if r1r2 is None:
        read = view.read
        ring_r1, ring_r2 = read.ring_r1_ohm, read.ring_r2_ohm
        extra: dict[str, Any] = {}
        if (view.get("circuit_form") == "ring" and ring_r1 is not None and ring_r2 is not None
                and ring_r1.exact and ring_r2.exact):
            assert ring_r1.value is not None and ring_r2.value is not None
            estimate = (ring_r1.value + ring_r2.value) / 4
            extra["ring_estimate_ohm"] = estimate
            return incomplete(CHECK, ["r1_r2_ohm"], basis=requirement, inputs=extra,
                              detail=lambda: f"{_NEEDS_R1R2}; the ring's end-to-end readings give "
                                             f"(r1 + r2)/4 = {estimate:.3g} Ω, which R1+R2 at the furthest "
                                             "point should read")
        return incomplete(CHECK, ["r1_r2_ohm"], detail=_NEEDS_R1R2, basis=requirement, inputs=extra)
    if r1r2.value is None:
        return _result("over_range", r1r2, Outcome.FAIL, "R1+R2 reads over range (OL): the line or the "
                       "protective conductor of the circuit is open", {}, None, requirement)
    outcome, detail, inputs, threshold = _plausibility(view, "R1+R2", r1r2, expected_resistance(view))
    method = "expected_iec60228" if inputs.get("expected_ohm") is not None else "recorded"
    return _result(method, r1r2, outcome, detail, inputs, threshold, requirement)


_NEEDS_R1R2 = "needs R1+R2: continuity of the protective conductor is verified on every circuit"


def _judge_r2(view: CircuitView, r2: Reading, r1r2: Reading | None, requirement: Basis) -> Finding:
    if r2.value is None:
        return _result("r2_over_range", r2, Outcome.FAIL, "R2 reads over range (OL): the protective "
                       "conductor is open", {}, None, requirement)
    if r1r2 is not None and r1r2.value is not None and r2.lower > r1r2.upper:
        return _result("r2_within_r1r2", r2, Outcome.INVESTIGATE,
                       lambda: f"R2 {r2.display('Ω')} exceeds R1+R2 {r1r2.display('Ω')}, of which it is a "
                               "part: the readings look mis-recorded", {"r1_r2_ohm": r1r2.value}, r1r2.value,
                       requirement)
    outcome, detail, inputs, threshold = _plausibility(view, "R2", r2,
                                                       expected_resistance(view, include_line=False))
    method = "r2_expected_iec60228" if inputs.get("expected_ohm") is not None else "r2_recorded"
    return _result(method, r2, outcome, detail, inputs, threshold, requirement)
