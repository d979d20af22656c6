"""Trade labels → circuit record fields: our own alias table, and header parsing.

Invariants:
- Labels are matched after :func:`fold`: case, spacing and punctuation do not
  matter (``R1+R2``, ``r1 + r2``, ``R1-R2`` all fold to ``r1r2``).
- Every field name of :mod:`engine.fields` is its own alias, with and without
  its unit suffix (``zs_ohm`` and ``zs``).
- A unit written in a header (``Zs (Ω)``, ``IR L-E [MΩ]``) is split off the
  label and becomes the unit of the column's bare numbers; a unit in a cell
  still wins over it (the reading parser decides).
- The table is ours: the trade's own terms (R1+R2, Zs, Ze, IΔn, cpc), no
  meter maker's column names.
"""

from __future__ import annotations

import re
from functools import lru_cache

from engine import FIELDS

__all__ = ["ALIASES", "field_for_label", "fold", "split_header"]

_NON_WORD = re.compile(r"[\W_]+")


def fold(label: str) -> str:
    """Case-, spacing- and punctuation-insensitive form of a label."""
    return _NON_WORD.sub("", label.casefold())


# Trade label → field. Folded on use, so spell them as people write them.
_TRADE_LABELS: dict[str, tuple[str, ...]] = {
    "board": ("DB", "Board", "Dist board", "Distribution board", "Panel", "Consumer unit", "CU"),
    "circuit": ("Circuit", "Cct", "Ckt", "Circuit no", "Circuit ref", "Way", "Way no"),
    "description": ("Description", "Desc", "Circuit description", "Designation"),
    "board_fed_from": ("Fed from", "Supplied from"),
    "nominal_voltage_v": ("U0", "Uo", "Nominal voltage", "Voltage"),
    "phases": ("Phases", "Ph", "No of phases"),
    "earthing": ("Earthing", "Earthing system", "Earthing arrangement"),
    "supply": ("Supply",),
    "circuit_form": ("Circuit form", "Ring or radial", "Form"),
    "circuit_role": ("Circuit role", "Role"),
    "socket_outlets": ("Socket outlets", "Sockets"),
    "load_type": ("Load type", "Load"),
    "design_current_a": ("Ib", "Design current"),
    "max_disconnection_s": ("Max disconnection time", "Disconnection time"),
    "device_kind": ("Device", "Device type", "OCPD type", "Protective device"),
    "device_standard": ("Device standard", "BS EN", "BS", "Standard"),
    "device_curve": ("Curve", "Type", "Device curve"),
    "device_rating_a": ("In", "Rating", "Device rating", "OCPD rating"),
    "device_breaking_ka": ("Breaking capacity", "Icn", "Icu"),
    "device_max_zs_ohm": ("Max Zs", "Zs max", "Maximum Zs"),
    "rcd_residual_ma": ("IΔn", "IDn", "I delta n", "RCD rating", "RCD mA"),
    "rcd_type": ("RCD type",),
    "rcd_delayed": ("RCD delayed", "Time delayed", "S type"),
    "conductor_material": ("Conductor", "Material", "Conductor material"),
    "line_mm2": ("Line", "Live", "Line csa", "Live csa", "Line mm2", "Live mm2"),
    "neutral_mm2": ("Neutral", "Neutral csa", "Neutral mm2"),
    "cpc_mm2": ("cpc", "cpc csa", "cpc mm2", "Earth csa"),
    "insulation_temp_c": ("Insulation temp", "Max conductor temp", "Operating temp"),
    "length_m": ("Length", "Route length", "Run length"),
    "cable_mv_per_a_m": ("mV/A/m", "Cable mV/A/m", "Tabulated VD"),
    "test_temp_c": ("Test temp", "Temperature", "Ambient"),
    "r1_r2_ohm": ("R1+R2", "R1 + R2", "R1R2", "Continuity", "Cont"),
    "r2_ohm": ("R2",),
    "ring_r1_ohm": ("r1", "Ring r1", "Ring R1"),
    "ring_rn_ohm": ("rn", "Ring rn", "Ring Rn"),
    "ring_r2_ohm": ("Ring r2", "Ring R2"),
    "ir_test_v": ("IR test voltage", "IR V", "Test voltage", "IR test V"),
    "ir_ll_mohm": ("IR L-N", "IR LN", "IR L-L", "IR live-live", "Insulation L-N", "IR live to live"),
    "ir_le_mohm": ("IR L-E", "IR LE", "IR L+N-E", "IR LN-E", "Insulation L-E", "IR live to earth"),
    "polarity_ok": ("Polarity", "Pol"),
    "zs_ohm": ("Zs", "Loop", "Loop impedance", "EFLI", "Measured Zs"),
    "ze_ohm": ("Ze", "External loop impedance", "External Zs"),
    "pfc_ka": ("PFC", "Ipf", "PSCC", "PEFC", "Prospective fault current"),
    "rcd_trip_ms": ("RCD ms", "RCD", "RCD time", "RCD x1", "RCD 1x", "x1", "Trip time", "RCD trip"),
    "rcd_trip_5x_ms": ("x5", "5x", "RCD x5", "RCD 5x", "RCD ms x5", "RCD 5x ms", "RCD time x5"),
    "rcd_half_no_trip": ("x1/2", "x½", "RCD x1/2", "RCD half", "Half trip", "No trip at half"),
    "ra_ohm": ("RA", "Ra", "Electrode", "Earth electrode", "Electrode resistance"),
}


def _unit_free(name: str) -> str:
    """``zs_ohm`` → ``zs``, ``device_rating_a`` → ``device_rating``."""
    spec = FIELDS[name]
    if spec.kind in ("reading", "number"):
        return re.sub(r"_(ohm|mohm|ka|ma|a|v|s|ms|c|m|mm2|mv_per_a_m)$", "", name)
    return name


def _build() -> dict[str, str]:
    table: dict[str, str] = {}
    for name, labels in _TRADE_LABELS.items():
        for label in labels:
            table.setdefault(fold(label), name)
    # field names win over trade labels: "r1" the ring reading, "in" the rating
    for name in FIELDS:
        table[fold(name)] = name
        table.setdefault(fold(_unit_free(name)), name)
    return table


ALIASES: dict[str, str] = _build()
"""Folded label → field name."""

# "Zs (Ω)", "IR L-E [MΩ]", "Zs / Ω": a trailing bracketed or slashed unit
_HEADER_UNIT = re.compile(r"^(?P<label>.*?)\s*(?:\((?P<p>[^()]*)\)|\[(?P<b>[^\[\]]*)\])\s*$")


@lru_cache(maxsize=4096)
def split_header(cell: str) -> tuple[str, str | None]:
    """``"Zs (Ω)"`` → ``("Zs", "Ω")``; a cell without a bracketed unit → ``(cell, None)``."""
    text = cell.strip().lstrip("\ufeff")
    match = _HEADER_UNIT.match(text)
    if match and match.group("label"):
        unit = (match.group("p") or match.group("b") or "").strip()
        return match.group("label").strip(), unit or None
    return text, None


@lru_cache(maxsize=4096)
def field_for_label(label: str) -> tuple[str | None, str | None]:
    """A header cell or key → ``(field, unit from the header)``; ``(None, None)`` if unknown.

    A bracketed unit is split off when the rest is a known label (``PFC (kA)``);
    otherwise the label is looked up whole (so ``mV/A/m`` stays a label).
    """
    bare, unit = split_header(label)
    if unit is not None:
        named = ALIASES.get(fold(bare))
        if named is not None:
            return named, unit
    whole = ALIASES.get(fold(label))
    if whole is not None:
        return whole, None
    return ALIASES.get(fold(bare)), unit
