"""Insulation resistance: minimum by circuit voltage band and test voltage (Table 64 / Table 6.1).

Invariants:
- One result per reading: ``ir_ll_mohm`` (between live conductors) and
  ``ir_le_mohm`` (live conductors to earth), so a person sees which one is low.
  Both missing → one ``incomplete`` naming both; one missing → ``incomplete`` for it.
- Band by circuit nominal voltage: U0 for single-phase, √3 × U0 (line to line)
  for three-phase. At or below ELV → SELV/PELV (250 V, 0.5 MΩ); up to 500 V →
  500 V, 1.0 MΩ; above → 1000 V, 1.0 MΩ.
- Below the minimum → fail, whatever the test voltage.
- Test voltage below the band's → investigate, except the live-to-earth test
  of a circuit in the ≤ 500 V band at the reduced voltage the ruleset allows
  (643.3.3: 250 V where equipment may be affected), which is judged against the
  same minimum and says so. The allowance does not cover the test between live
  conductors, nor circuits above 500 V.
- No test voltage recorded → incomplete (a pass needs the test voltage).
- Within the minimum but below the attention level (2 MΩ) → investigate.
- Bounded readings: ``> 999 MΩ`` and ``OL`` pass; a bound that settles nothing
  (``< 5 MΩ`` against 1 MΩ) → investigate.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from ..compiled import basis, derived, remember
from ..context import CircuitView, Context
from ..findings import Basis, Detail, Finding, found, render
from ..plausibility import Withheld
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ._compare import Side, compare_min, incomplete

__all__ = ["Band", "band_for", "run"]

CHECK = "insulation"
SECTION = "insulation"
_READINGS = (("ir_ll_mohm", "between live conductors"), ("ir_le_mohm", "live conductors to earth"))
_SQRT3 = math.sqrt(3)


@dataclass(frozen=True, slots=True, kw_only=True)
class Band:
    key: str  # "selv_pelv", "lv" or "above_lv": the ruleset's key prefix
    name: str
    test_v: float
    min_mohm: float
    basis: Basis


def band_for(rules: Ruleset, circuit_v: float) -> Band:
    """Table 64 row for a circuit of nominal voltage ``circuit_v``."""
    if circuit_v <= float(rules.value(SECTION, "elv_max_v")):
        key = "selv_pelv"
        name = "SELV/PELV"
    elif circuit_v <= float(rules.value(SECTION, "lv_band_max_v")):
        key, name = "lv", f"up to {rules.value(SECTION, 'lv_band_max_v'):g} V"
    else:
        key, name = "above_lv", f"above {rules.value(SECTION, 'lv_band_max_v'):g} V"
    return Band(key=key, name=name, test_v=float(rules.value(SECTION, f"{key}_test_v")),
                min_mohm=float(rules.value(SECTION, f"{key}_min_mohm")),
                basis=basis(rules, SECTION, f"{key}_min_mohm"))


# band_for is a pure function of the ruleset and the voltage, asked up to three times per
# circuit for the same few voltages: kept in the ruleset's group memo (engine.compiled).
_BAND_KEY = "insulation.band"


def _band(ctx: Context, circuit_v: float) -> Band:
    key = (_BAND_KEY, type(circuit_v), circuit_v)
    try:
        cached: Band = ctx.memo[key]
    except KeyError:
        cached = remember(ctx.memo, key, band_for(ctx.ruleset, circuit_v))
    return cached


def _same_band(ctx: Context, u0: float, line_to_line: float) -> bool:
    key = (_BAND_KEY, "same", u0)
    try:
        same: bool = ctx.memo[key]
    except KeyError:
        same = remember(ctx.memo, key, _band(ctx, u0).key == _band(ctx, line_to_line).key)
    return same


def _attention(rules: Ruleset) -> float:
    return float(rules.value(SECTION, "attention_mohm"))


def _circuit_voltage(view: CircuitView, ctx: Context) -> float | None:
    u0 = view.get("nominal_voltage_v")
    if u0 is None:
        return None
    # Table 64 bands by the circuit's nominal voltage: line to line on a three-phase circuit
    line_to_line = float(u0) * _SQRT3
    if view.read.phases is None and _same_band(ctx, float(u0), line_to_line):
        return float(u0)  # same band either way: no need to assume (and report) a phase count
    return line_to_line if view.get("phases") == 3 else float(u0)


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    if not (view.has("ir_ll_mohm") or view.has("ir_le_mohm")):
        yield incomplete(CHECK, [name for name, _ in _READINGS], basis=basis(rules, SECTION, "lv_min_mohm"))
        return
    circuit_v = _circuit_voltage(view, ctx)
    if circuit_v is None:
        yield incomplete(CHECK, ["nominal_voltage_v"], detail="the minimum depends on the circuit voltage")
        return
    band = _band(ctx, circuit_v)
    test_v = view.read.ir_test_v
    for name, where in _READINGS:
        try:  # each reading is its own judgement: one withheld never hides the other's fail
            reading = view.raw(name)
        except Withheld as exc:
            yield exc.result(CHECK, view.record.key)
            continue
        if reading is None:
            yield incomplete(CHECK, [name], basis=band.basis, inputs={"conductors": where})
        else:
            yield _judge(rules, band, circuit_v, test_v, name, where, reading)


def _test_voltage_note(rules: Ruleset, band: Band, test_v: float | None,
                       name: str) -> tuple[Outcome | None, Detail]:
    """What the test voltage allows: (``None`` = fine, else the outcome it forces), and a note."""
    if test_v is None:
        return Outcome.INCOMPLETE, "no test voltage recorded (IR test voltage)"
    if test_v >= band.test_v:
        return None, lambda: f"tested at {test_v:g} V"
    reduced = rules.get(SECTION, "reduced_le_test_v")
    # 643.3.3: the reduced voltage is an allowance for the live-to-earth test of a
    # low-voltage circuit (≤ 500 V band) only; it never covers the 1000 V band.
    if name == "ir_le_mohm" and reduced is not None and band.key == "lv" and test_v >= float(reduced):
        allowance = basis(rules, SECTION, "reduced_le_test_v")
        return None, lambda: (f"tested at {test_v:g} V, the reduced live-to-earth voltage allowed where "
                              f"equipment may be affected ({allowance.text})")
    return Outcome.INVESTIGATE, lambda: (f"tested at {test_v:g} V, below the {band.test_v:g} V the band "
                                         "requires")


def _judge(rules: Ruleset, band: Band, circuit_v: float, test_v: float | None, name: str,
           where: str, reading: Reading) -> Finding:
    attention = derived(rules, _attention)
    forced, note = _test_voltage_note(rules, band, test_v, name)
    minimum = band.min_mohm
    side = compare_min(reading, minimum)
    missing = forced is Outcome.INCOMPLETE

    def inputs() -> dict[str, Any]:
        out = {"conductors": where, "field": name, "circuit_voltage_v": circuit_v, "band": band.name,
               "required_test_v": band.test_v, "test_v": test_v, "attention_mohm": attention}
        if missing:
            out["missing"] = ["ir_test_v"]
        return out

    if side is Side.BEYOND:
        outcome, text = Outcome.FAIL, _BELOW
    elif side is Side.UNKNOWN:
        outcome, text = Outcome.INVESTIGATE, _UNSETTLED
    elif forced is not None:
        outcome, text = forced, _MEETS
    elif compare_min(reading, attention) is not Side.WITHIN:
        outcome, text = Outcome.INVESTIGATE, _LOW
    else:
        outcome, text = Outcome.PASS, _MEETS
    return found(CHECK, outcome, value=reading.value, relation=reading.relation, limit=minimum,
                 limit_kind="min", unit="MΩ", method="table_minimum", basis=band.basis, inputs=inputs,
                 detail=lambda: _sentence(where, text, reading, minimum, attention, note))


def _sentence(where: str, text: str, reading: Reading, minimum: float, attention: float, note: Detail) -> str:
    said = text.format(shown=reading.display("MΩ"), minimum=minimum, attention=attention)
    return f"{where}: {said}; {render(note)}"


_BELOW = "{shown} is below the {minimum:g} MΩ minimum"
_UNSETTLED = "the bounded reading {shown} does not show the {minimum:g} MΩ minimum met"
_MEETS = "{shown} meets the {minimum:g} MΩ minimum"
_LOW = ("{shown} meets the {minimum:g} MΩ minimum but is below {attention:g} MΩ, which may point to a latent "
        "defect (test the circuits separately)")
