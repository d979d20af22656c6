"""The trade's words for field names: what a detail sentence says where a program reads the name.

Machines read field names (``inputs.missing``: ``["zs_ohm"]``); people read the
sentence (``detail``: "needs Zs to decide"). This is the one table of those
words, for the engine's sentences and for any renderer.

Invariants:
- Every circuit, board and installation field has a word (a test checks it);
  the words are the trade's own (R1+R2, Zs, Ze, Zdb, IΔn, cpc …, BS 7671's
  symbols), never another program's labels.
- :func:`word_for` of a name with no word is the name itself, so a new field
  is never lost from a sentence, only unworded.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from types import MappingProxyType
from typing import Final

__all__ = ["FIELD_WORDS", "word_for", "words"]

FIELD_WORDS: Final[Mapping[str, str]] = MappingProxyType({
    "board": "board", "circuit": "circuit", "description": "description", "location": "location",
    "board_fed_from": "fed from", "nominal_voltage_v": "U0", "phases": "phases",
    "earthing": "earthing system",
    "supply": "supply", "circuit_form": "ring or radial", "circuit_role": "circuit role",
    "socket_outlets": "socket-outlets", "load_type": "load type", "design_current_a": "Ib",
    "max_disconnection_s": "maximum disconnection time", "device_kind": "device type",
    "device_standard": "device standard", "device_curve": "curve", "device_rating_a": "In",
    "device_breaking_ka": "breaking capacity", "device_max_zs_ohm": "the given maximum Zs",
    "rcd_residual_ma": "IΔn", "rcd_type": "RCD type", "rcd_delayed": "time delay (S)",
    "rcd_type_required": "RCD type required", "conductor_material": "conductor material",
    "line_mm2": "line size", "neutral_mm2": "neutral size", "cpc_mm2": "cpc size",
    "insulation_temp_c": "maximum conductor temperature", "cable_type": "cable type",
    "reference_method": "installation method", "cable_iz_a": "Iz", "ambient_factor": "Ca",
    "grouping_factor": "Cg", "thermal_insulation_factor": "Ci", "length_m": "length",
    "cable_mv_per_a_m": "mV/A/m", "test_temp_c": "test temperature", "r1_r2_ohm": "R1+R2", "r2_ohm": "R2",
    "ring_r1_ohm": "ring r1", "ring_rn_ohm": "ring rn", "ring_r2_ohm": "ring r2",
    "ir_test_v": "IR test voltage", "ir_ll_mohm": "IR L-L", "ir_le_mohm": "IR L-E", "polarity_ok": "polarity",
    "zs_ohm": "Zs", "ze_ohm": "Ze", "zdb_ohm": "Zdb", "pfc_ka": "PFC", "rcd_trip_ms": "RCD time at IΔn",
    "rcd_trip_5x_ms": "RCD time at 5 IΔn", "rcd_half_no_trip": "RCD at ½ IΔn", "ra_ohm": "RA",
    "socket_rating_a": "socket-outlet rating", "outdoor_equipment": "outdoor equipment",
    "concealed_in_wall": "concealed in a wall", "premises": "premises",
})


def word_for(name: str) -> str:
    """The trade's word for a field name (the name itself when there is none).

    A name qualified by where it is (``"DB1/5 r1_r2_ohm"``, as ``inputs.missing``
    names a feeder's reading) keeps the qualifier: ``"DB1/5 R1+R2"``.
    """
    found = FIELD_WORDS.get(name)
    if found is not None:
        return found
    if " or " in name:  # "design_current_a or device_rating_a"
        return " or ".join(word_for(part) for part in name.split(" or "))
    where, _, field = name.rpartition(" ")
    if where and field in FIELD_WORDS:
        return f"{where} {FIELD_WORDS[field]}"
    return name


def words(names: Iterable[str]) -> str:
    """Several fields in a sentence: ``"Zs, Ze and R1+R2"``."""
    said = [word_for(n) for n in names]
    if len(said) <= 1:
        return "".join(said)
    return f"{', '.join(said[:-1])} and {said[-1]}"
