"""The trade's words for what people read: field names → R1+R2, Zs, IΔn; check results → what was tested.

Invariants:
- Programs get the field names and check ids (JSON, CSV); people get these
  words (table, JUnit case names and messages). The mapping is one table per
  kind of name, so every renderer says the same thing.
- :func:`trade_text` rewrites field names that appear whole in a sentence
  (``ze_ohm`` → ``Ze``); any other text is left as it is.
- :func:`case_names` names each check result of a circuit by what it tested
  (``insulation L-E``, ``rcd_time at 5 IΔn``, ``ring_continuity r1 vs rn``),
  unique within the circuit: a result with nothing to tell it apart keeps the
  check id, then ``#2``, ``#3`` … as a last resort.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from engine import FIELDS

__all__ = ["FIELD_WORDS", "INPUT_WORDS", "case_names", "trade_text", "word_for"]

FIELD_WORDS: dict[str, str] = {
    "board": "board", "circuit": "circuit", "description": "description", "board_fed_from": "fed from",
    "nominal_voltage_v": "U0", "phases": "phases", "earthing": "earthing", "supply": "supply",
    "circuit_form": "ring/radial", "circuit_role": "circuit role", "socket_outlets": "socket-outlets",
    "load_type": "load type", "design_current_a": "Ib", "max_disconnection_s": "maximum disconnection time",
    "device_kind": "device", "device_standard": "device standard", "device_curve": "curve",
    "device_rating_a": "In", "device_breaking_ka": "breaking capacity",
    "device_max_zs_ohm": "given maximum Zs",
    "rcd_residual_ma": "IΔn", "rcd_type": "RCD type", "rcd_delayed": "time-delayed RCD",
    "conductor_material": "conductor material", "line_mm2": "line csa", "neutral_mm2": "neutral csa",
    "cpc_mm2": "cpc csa", "insulation_temp_c": "conductor operating temperature", "length_m": "length",
    "cable_mv_per_a_m": "mV/A/m", "test_temp_c": "test temperature", "r1_r2_ohm": "R1+R2", "r2_ohm": "R2",
    "ring_r1_ohm": "ring r1", "ring_rn_ohm": "ring rn", "ring_r2_ohm": "ring r2",
    "ir_test_v": "IR test voltage", "ir_ll_mohm": "IR L-L", "ir_le_mohm": "IR L-E", "polarity_ok": "polarity",
    "zs_ohm": "Zs", "ze_ohm": "Ze", "pfc_ka": "PFC", "rcd_trip_ms": "RCD time at IΔn",
    "rcd_trip_5x_ms": "RCD time at 5 IΔn", "rcd_half_no_trip": "RCD at ½ IΔn", "ra_ohm": "RA",
    "socket_rating_a": "socket-outlet rating", "outdoor_equipment": "outdoor equipment",
    "concealed_in_wall": "concealed in a wall", "premises": "premises", "cable_type": "cable type",
    "reference_method": "installation method", "cable_iz_a": "Iz", "zdb_ohm": "Zdb",
}

# Names of a check's inputs that are not record fields (the rest read as they are).
INPUT_WORDS: dict[str, str] = {
    "current_a": "I", "temp_factor": "F", "u0_v": "U0", "ze": "Ze", "pfc": "PFC", "max_zs": "maximum Zs",
    "disconnection_s": "disconnection time", "quick_v": "quick drop", "circuit_v": "drop in the circuit",
    "upstream_v": "drop upstream", "limit_pct": "limit %", "r1_ohm": "R1", "rn_ohm": "Rn",
    "expected_ohm": "expected", "expected_zs_ohm": "expected Zs", "consensus_ze_ohm": "board's Ze",
}

_FIELD_PATTERN = re.compile(r"\b(" + "|".join(sorted((re.escape(n) for n in {*FIELDS, *FIELD_WORDS}),
                                                     key=len, reverse=True)) + r")\b")


_ECHO = re.compile(r"(?<![\w+])([^\s()]+) \(\1\)")


def word_for(name: str) -> str:
    """The trade's word for a field or input name (the name itself when there is none)."""
    return FIELD_WORDS.get(name) or INPUT_WORDS.get(name) or name


def trade_text(text: str) -> str:
    """``text`` with every whole field name replaced by the trade's word for it."""
    if "_" not in text:
        return text
    worded = _FIELD_PATTERN.sub(lambda m: FIELD_WORDS.get(m.group(1), m.group(1)), text)
    return _ECHO.sub(r"\1", worded)  # "Ib (design_current_a)" became "Ib (Ib)": say it once


_RING = {"r1_vs_rn": "r1 vs rn", "r2_vs_r1": "r2 vs r1", "cross_connected": "R1+R2 vs (r1 + r2)/4",
         "end_to_end_open": "open ring"}
_IR = {"ir_ll_mohm": "L-L", "ir_le_mohm": "L-E"}


def _one_missing(inputs: Mapping[str, Any], table: Mapping[str, str]) -> str | None:
    missing = inputs.get("missing") or ()
    names = [table[m] for m in missing if m in table]
    return names[0] if len(names) == 1 and len(missing) == 1 else None


def _insulation(check: Mapping[str, Any], inputs: Mapping[str, Any]) -> str | None:
    return _IR.get(str(inputs.get("field"))) or _one_missing(inputs, _IR)


def _rcd_time(check: Mapping[str, Any], inputs: Mapping[str, Any]) -> str | None:
    test = inputs.get("test")
    return f"at {test}" if test else None


def _ring(check: Mapping[str, Any], inputs: Mapping[str, Any]) -> str | None:
    return _RING.get(str(check.get("method")))


def _consistency(check: Mapping[str, Any], inputs: Mapping[str, Any]) -> str | None:
    if "circuits" in inputs:
        return "vs the board's Ze"
    return "vs Ze + R1+R2" if "ze_source" in inputs or "ze_ohm" in inputs else None


_QUALIFIERS: dict[str, Callable[[Mapping[str, Any], Mapping[str, Any]], str | None]] = {
    "insulation": _insulation,
    "rcd_time": _rcd_time,
    "ring_continuity": _ring,
    "loop_consistency": _consistency,
}


def case_names(checks: Sequence[Mapping[str, Any]]) -> list[str]:
    """A name per check result of one circuit, saying what it tested, unique within the circuit."""
    named: list[str] = []
    for check in checks:
        qualify = _QUALIFIERS.get(str(check.get("check")))
        extra = qualify(check, check.get("inputs") or {}) if qualify else None
        named.append(f"{check['check']} {extra}" if extra else str(check["check"]))
    seen: Counter[str] = Counter()
    unique: list[str] = []
    for name in named:
        seen[name] += 1
        unique.append(name if seen[name] == 1 else f"{name}#{seen[name]}")
    return unique
