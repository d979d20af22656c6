"""One circuit's own voltage drop, by the most precise method its data supports.

Invariants (engine/README.md "Voltage drop"; IEC 60364-5-52 Annex G, BS 7671 Appendix 4):
- Current I = Ib (``design_current_a``) if given, else In (``device_rating_a``);
  the basis is reported. No current → no drop (the caller says incomplete).
- F = (1 + α(θmax − 20)) / (1 + α(θtest − 20)) (``engine.temperature``) turns
  readings taken at the test temperature into resistances at the maximum
  operating temperature. Tabulated mV/A/m are already at that temperature.
- Order of precision, first that the data supports wins:
  ring (single-phase): end-to-end r1, rn → R1+R2 split → R1+R2 quick → tabulated;
  three-phase: R1 from R1+R2 − R2 → R1+R2 split → quick → tabulated;
  radial single-phase: split (measured R2, else areas) → quick → tabulated.
  Readings beat design data: the tabulated method is used "where only length
  and cable are known", and its figure is reported beside a reading-based one.
- Only exact readings enter a drop; a bounded or over-range reading is skipped
  with a note, never read as its bound.
- The quick figure (R1+R2) × F × I is reported beside the chosen one whenever
  R1+R2 was measured, so a person can check it by hand.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

from .compiled import derived
from .conductors import area, operating_ohm_per_m
from .context import CircuitView
from .readings import Reading
from .ruleset import Ruleset
from .temperature import temperature_factor

__all__ = ["Drop", "NoDrop", "circuit_current", "own_drop"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Drop:
    """A computed drop, line to earth (per phase for a balanced three-phase circuit)."""

    volts: float
    method: str
    explanation: str
    inputs: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, slots=True, kw_only=True)
class NoDrop:
    """Why no drop could be computed: the fields that would have made one possible."""

    missing: list[str]
    detail: str
    inputs: dict[str, Any] = field(default_factory=dict)


#: A drop before it is chosen: (volts, method, explanation, inputs). Only the chosen one becomes a
#: :class:`Drop` (a frozen dataclass costs ~1.5 µs to build; three were built a circuit, tests/bench).
_Found = tuple[float, str, str, dict[str, Any]]


def circuit_current(view: CircuitView) -> tuple[float, str] | None:
    """(I, basis): Ib if given, else In."""
    read = view.read
    ib = read.design_current_a
    if ib is not None:
        return float(ib), "design_current"
    rating = read.device_rating_a
    if rating is not None:
        return float(rating), "device_rating"
    return None


def _exact(reading: Reading | None) -> float | None:
    return reading.value if reading is not None and reading.relation == "=" else None


def _alpha(rules: Ruleset) -> float:
    return float(rules.value("temperature", "alpha_per_k"))


def _ring_divisor(rules: Ruleset) -> float:
    return float(rules.value("voltage_drop", "ring_mid_point_divisor"))


_NEEDS_CURRENT = NoDrop(missing=["design_current_a or device_rating_a"],
                        detail="needs Ib (the design current) or In (the device's rating) for the current")


def own_drop(view: CircuitView) -> Drop | NoDrop:
    """The circuit's own drop; ``NoDrop`` naming what is missing when none can be had."""
    current = circuit_current(view)
    if current is None:
        return NoDrop(missing=list(_NEEDS_CURRENT.missing), detail=_NEEDS_CURRENT.detail)
    amps, basis = current
    rules = view.ruleset
    alpha = derived(rules, _alpha)
    theta_max = float(view.get("insulation_temp_c"))
    theta_test = float(view.get("test_temp_c"))
    factor = temperature_factor(alpha, theta_max, theta_test)
    common: dict[str, Any] = {"current_a": amps, "current_basis": basis, "temp_factor": factor}
    notes: list[str] = []
    r1r2 = view.read.r1_r2_ohm
    r1r2_v = _exact(r1r2)
    if r1r2 is not None and r1r2_v is None:
        notes.append(f"R1+R2 {r1r2.display('Ω')} is not an exact reading and is not used")
    quick = None if r1r2_v is None else r1r2_v * factor * amps
    common["quick_v"] = quick
    tabulated = _tabulated(view, amps)
    if tabulated is not None:
        common["tabulated_v"] = tabulated[0]
    three_phase = view.get("phases") == 3
    ring = not three_phase and view.get("circuit_form") == "ring"
    candidates = (_ring_end_to_end(view, amps, factor, notes) if ring else None,
                  _split(view, r1r2_v, amps, factor, notes, ring=ring, three_phase=three_phase))
    for found in candidates:
        if found is not None:
            return _with(found, common, notes)
    if quick is not None:
        method = "three_phase_quick" if three_phase else ("ring_r1r2_quick" if ring else "r1r2_quick")
        formula = "(R1+R2) × F × I, an upper bound when the cpc is no larger than the neutral"
        return _with((quick, method, formula, {}), common, notes)
    if tabulated is not None:
        return _with(tabulated, common, notes)
    return NoDrop(missing=["r1_r2_ohm (or ring end-to-end readings), or length_m with line_mm2 "
                           "or cable_mv_per_a_m"],
                  detail="needs R1+R2, or the length and the cable (size or mV/A/m)"
                         + (f"; {'; '.join(notes)}" if notes else ""),
                  inputs={k: v for k, v in common.items() if v is not None})


def _with(found: _Found, common: dict[str, Any], notes: list[str]) -> Drop:
    volts, method, explanation, own = found
    inputs = {**common, **own}
    if notes:
        inputs["notes"] = list(notes)
    return Drop(volts=volts, method=method, explanation=explanation, inputs=inputs)


def _ring_end_to_end(view: CircuitView, amps: float, factor: float, notes: list[str]) -> _Found | None:
    read = view.read
    r1, rn = read.ring_r1_ohm, read.ring_rn_ohm
    r1_v, rn_v = _exact(r1), _exact(rn)
    if r1 is None or rn is None:
        return None
    if r1_v is None or rn_v is None:
        notes.append("ring end-to-end readings are not both exact and are not used")
        return None
    divisor = derived(view.ruleset, _ring_divisor)
    volts = amps * (r1_v + rn_v) / divisor * factor
    return (volts, "ring_end_to_end", "I × (r1 + rn)/4 × F, load at the ring's mid-point",
            {"ring_r1_ohm": r1_v, "ring_rn_ohm": rn_v})


def _split(view: CircuitView, r1r2: float | None, amps: float, factor: float, notes: list[str],
           *, ring: bool, three_phase: bool) -> _Found | None:
    """R1 from R1+R2 − R2 (measured) or by the area split; Rn = R1 × A_line / A_neutral."""
    if r1r2 is None:
        return None
    read = view.read
    line, cpc = area(read.line_mm2), area(read.cpc_mm2)
    r1: float | None = None
    r1_basis = ""
    r2 = read.r2_ohm
    r2_v = _exact(r2)
    if r2_v is not None:
        if r2_v <= r1r2:
            r1, r1_basis = r1r2 - r2_v, "r1r2_minus_measured_r2"
        else:
            notes.append(f"measured R2 {r2_v:g} Ω exceeds R1+R2 {r1r2:g} Ω and is not used")
    if r1 is None and line is not None and cpc is not None:
        r1, r1_basis = r1r2 * cpc / (line + cpc), "area_split"
    if r1 is None:
        return None
    inputs: dict[str, Any] = {"r1_r2_ohm": r1r2, "r1_ohm": r1, "r1_basis": r1_basis}
    if three_phase:
        # balanced load: no neutral current, so the per-phase drop is the line conductor's alone
        inputs["rn_ohm"] = 0.0
        return (r1 * factor * amps, "three_phase_split", "balanced three-phase, per-phase R1 × F × I", inputs)
    neutral = area(read.neutral_mm2)
    if neutral is not None and line is None:
        notes.append("a neutral size given without the line size: the neutral/line ratio is unknown")
        return None
    ratio = 1.0 if neutral is None or line is None else line / neutral
    if neutral is None and line is not None:
        view.get("neutral_mm2")  # reports the default (neutral = line)
    rn = r1 * ratio
    inputs["rn_ohm"] = rn
    return ((r1 + rn) * factor * amps, "ring_r1r2_split" if ring else "r1r2_split",
            _SPLIT_RING if ring else _SPLIT, inputs)


_SPLIT = "(R1 + Rn) × F × I with R1, Rn split from R1+R2"
_SPLIT_RING = _SPLIT + " at the ring's furthest point"


def _tabulated(view: CircuitView, amps: float) -> _Found | None:
    """mV/A/m × I × L / 1000 (÷ 4 for a ring loaded at its mid-point)."""
    read = view.read
    length = read.length_m
    if length is None:
        return None
    three_phase = view.get("phases") == 3
    ring = not three_phase and view.get("circuit_form") == "ring"
    given = read.cable_mv_per_a_m
    inputs: dict[str, Any] = {"length_m": float(length)}
    if given is not None:
        mv = float(given)
        inputs.update(mv_per_a_m=mv, mv_basis="given")
        # BS 7671 Appendix 4 tabulates three-phase mV/A/m line to line: per phase ÷ √3
        per_phase_mv = mv / _SQRT3 if three_phase else mv
    else:
        material = str(view.get("conductor_material"))
        theta = float(view.get("insulation_temp_c"))
        r_line = operating_ohm_per_m(view.ruleset, material, area(read.line_mm2), theta)
        if r_line is None:
            return None
        if three_phase:
            per_phase_mv = r_line * 1000.0
            mv = per_phase_mv * _SQRT3
        else:
            neutral = area(read.neutral_mm2) or area(read.line_mm2)
            r_neutral = operating_ohm_per_m(view.ruleset, material, neutral, theta)
            if r_neutral is None:
                return None
            mv = per_phase_mv = (r_line + r_neutral) * 1000.0
        inputs.update(mv_per_a_m=mv, mv_basis=f"IEC 60228 {material} at {theta:g} °C")
    divisor = derived(view.ruleset, _ring_divisor) if ring else 1.0
    volts = per_phase_mv * amps * float(length) / 1000.0 / divisor
    method = "three_phase_tabulated" if three_phase else ("ring_tabulated" if ring else "tabulated")
    return (volts, method, _TABULATED[(three_phase, ring)], inputs)


_SQRT3 = math.sqrt(3)
_TABULATED = {(three_phase, ring): "mV/A/m × I × L / 1000" + (" / 4 (ring, mid-point load)" if ring else "")
              + (", per phase" if three_phase else "")
              for three_phase in (False, True) for ring in (False, True)}
