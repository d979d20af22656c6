"""Trade labels → circuit record fields: our own alias table, and header parsing.

Invariants:
- Labels are matched after :func:`fold`: case, spacing and punctuation do not
  matter (``R1+R2``, ``r1 + r2``, ``R1-R2`` all fold to ``r1r2``) — except for
  the trade's lower- and upper-case resistances, where case is the meaning:
  ``r1``, ``rn`` are a ring's end-to-end readings, ``R2`` the cpc's continuity
  (:data:`_CASED`).
- Every field name of :mod:`engine.fields` is its own alias, always, and so is
  every trade-notation input (``device``, ``cable``; ``rcd`` spelt exactly so,
  since ``RCD`` alone is ambiguous) and every board or installation field
  (``zdb_ohm``, ``location``). Its unit-free form (``zs`` for ``zs_ohm``) is one
  too, unless that form is ambiguous (``line``, ``cpc``, ``r2``).
- A label may belong to one scope: ``PFC at board`` is the board's PFC, never
  a circuit's (``Label.scope``); :mod:`adapters.scopes` says whether a name is
  read in the record at hand.
- An alias means one field to every tester. A label that testers use for
  several things (``Voltage``: U0 or the insulation test voltage; ``Type``:
  breaker curve or RCD type; ``RCD``; ``Rating`` …) maps to no field: it is an
  :class:`Label` with ``fields`` listing what it could mean, which the
  adapters report as an ``ambiguous_label`` warning. Guessing would change a
  verdict (a ``Voltage`` of 500 read as U0 makes a 25 V voltage-drop limit).
- A unit written in a header (``Zs (Ω)``, ``IR L-E [MΩ]``) is split off the
  label and becomes the unit of the column's bare numbers; a unit in a cell
  still wins over it (the reading parser decides).
- The table is ours: the trade's own terms (R1+R2, Zs, Ze, IΔn, cpc csa), no
  meter maker's column names.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from functools import lru_cache

from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS
from engine.record_notation import NOTATION_INPUTS

__all__ = [
    "ALIASES",
    "AMBIGUOUS",
    "SCOPED",
    "Label",
    "field_for_label",
    "fold",
    "resolve_label",
    "split_header",
    "suggestion",
]

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
    "nominal_voltage_v": ("U0", "Uo", "Nominal voltage", "Nominal U0"),
    "phases": ("Phases", "No of phases", "Number of phases"),
    "earthing": ("Earthing", "Earthing system", "Earthing arrangement"),
    "supply": ("Supply",),
    "circuit_form": ("Circuit form", "Ring or radial"),
    "circuit_role": ("Circuit role",),
    "socket_outlets": ("Socket outlets", "Sockets"),
    "load_type": ("Load type",),
    "design_current_a": ("Ib", "Design current"),
    "max_disconnection_s": ("Max disconnection time", "Maximum disconnection time"),
    "device_kind": ("Device type", "Device kind", "OCPD type"),
    "device_standard": ("Device standard", "BS EN", "BS"),
    "device_curve": ("Curve", "Device curve", "Breaker curve"),
    "device_rating_a": ("In", "Device rating", "OCPD rating"),
    "device_breaking_ka": ("Breaking capacity", "Icn", "Icu"),
    "device_max_zs_ohm": ("Max Zs", "Zs max", "Maximum Zs"),
    "rcd_residual_ma": ("IΔn", "IDn", "I delta n", "RCD rating", "RCD mA"),
    "rcd_type": ("RCD type",),
    "rcd_delayed": ("RCD delayed", "Time delayed", "S type"),
    "conductor_material": ("Material", "Conductor material"),
    "line_mm2": ("Line csa", "Live csa", "Line mm2", "Live mm2"),
    "neutral_mm2": ("Neutral csa", "Neutral mm2"),
    "cpc_mm2": ("cpc csa", "cpc mm2", "Earth csa"),
    "insulation_temp_c": ("Insulation temp", "Max conductor temp", "Operating temp"),
    "length_m": ("Length", "Route length", "Run length"),
    "cable_mv_per_a_m": ("mV/A/m", "Cable mV/A/m", "Tabulated VD"),
    "test_temp_c": ("Test temp", "Test temperature", "Conductor temp at test"),
    "r1_r2_ohm": ("R1+R2", "R1 + R2", "R1R2"),
    "r2_ohm": ("R2 continuity", "cpc continuity"),
    "ring_r1_ohm": ("Ring r1", "Ring R1"),
    "ring_rn_ohm": ("Ring rn", "Ring Rn"),
    "ring_r2_ohm": ("Ring r2", "Ring R2"),
    "ir_test_v": ("IR test voltage", "IR V", "IR test V", "Insulation test voltage"),
    "ir_ll_mohm": ("IR L-N", "IR LN", "IR L-L", "IR live-live", "Insulation L-N", "IR live to live"),
    "ir_le_mohm": ("IR L-E", "IR LE", "IR L+N-E", "IR LN-E", "Insulation L-E", "IR live to earth"),
    "polarity_ok": ("Polarity", "Pol"),
    "zs_ohm": ("Zs", "Measured Zs"),
    "ze_ohm": ("Ze", "External loop impedance", "External Zs"),
    "pfc_ka": ("PFC", "Ipf", "Prospective fault current"),
    "rcd_trip_ms": ("RCD ms", "RCD time", "RCD x1", "RCD 1x", "x1", "Trip time", "RCD trip"),
    "rcd_trip_5x_ms": ("x5", "5x", "RCD x5", "RCD 5x", "RCD ms x5", "RCD 5x ms", "RCD time x5"),
    "rcd_half_no_trip": ("x1/2", "x½", "RCD x1/2", "RCD half", "Half trip", "No trip at half"),
    "ra_ohm": ("RA", "Ra", "Electrode", "Earth electrode", "Electrode resistance"),
    # trade notation, read by the engine into the split fields (B32, BS 88-3 32A; 2.5/1.5)
    "device": ("Device", "Protective device", "OCPD", "Overcurrent device"),
    "cable": ("Cable", "Cable size", "Cable csa", "Line/cpc", "Live/cpc"),
    # board facts that are no circuit field
    "zdb_ohm": ("Zdb", "Zs at board", "Zs at DB"),
    "location": ("Location", "Board location", "DB location"),
}

# Labels that name a fact of one scope only: (field, scope) → labels.
_SCOPED_LABELS: dict[tuple[str, str], tuple[str, ...]] = {
    ("pfc_ka", "board"): ("PFC at board", "PFC at DB", "Ipf at board"),
    ("ze_ohm", "installation"): ("Ze at origin",),
    ("pfc_ka", "installation"): ("PFC at origin", "Ipf at origin"),
}
#: Every name that is its own alias: circuit fields, notation inputs, board and installation fields.
_OWN_NAMES: dict[str, object] = {**INSTALLATION_FIELDS, **BOARD_FIELDS, **FIELDS,
                                 **dict.fromkeys(NOTATION_INPUTS)}

# Labels that mean different fields to different testers: never guessed, always reported.
_AMBIGUOUS_LABELS: tuple[tuple[tuple[str, ...], tuple[str, ...], str], ...] = (
    (("Voltage", "Volts", "V", "Test voltage"), ("nominal_voltage_v", "ir_test_v"),
     "may be U0 or the insulation test voltage (or a voltage measured at the circuit)"),
    (("Type",), ("device_curve", "rcd_type", "device_kind"),
     "may be a breaker curve, an RCD type (B is both) or the kind of device"),
    (("RCD",), ("rcd_trip_ms", "rcd_residual_ma", "rcd_type"),
     "may be a trip time, IΔn or the RCD type (the RCD as a schedule writes it, 30mA A, is the key "
     "'rcd' in lower case)"),
    (("Rating",), ("device_rating_a", "rcd_residual_ma", "device_breaking_ka"),
     "may be In, IΔn or the breaking capacity"),
    (("Line", "Live", "L"), ("line_mm2", "ring_r1_ohm"),
     "may be the line conductor's csa or a ring's end-to-end r1"),
    (("Neutral", "N"), ("neutral_mm2", "ring_rn_ohm"),
     "may be the neutral's csa or a ring's end-to-end rn"),
    (("cpc", "Earth", "E"), ("cpc_mm2", "ring_r2_ohm", "r2_ohm"),
     "may be the cpc's csa, a ring's end-to-end r2 or the cpc's continuity R2"),
    (("Conductor", "Conductors"), ("conductor_material", "line_mm2"),
     "may be the conductor material or its csa"),
    (("Temperature", "Temp", "Ambient"), ("test_temp_c", "insulation_temp_c"),
     "may be the conductor temperature at test, the ambient air, or the maximum operating "
     "temperature of the insulation"),
    (("Continuity", "Cont"), ("r1_r2_ohm", "r2_ohm"),
     "may be R1+R2 or R2"),
    (("Loop", "Loop impedance", "EFLI", "Earth loop"), ("zs_ohm", "ze_ohm", "r1_r2_ohm"),
     "may be Zs, Ze or the R1+R2 loop"),
    (("PSCC", "PEFC"), ("pfc_ka",),
     "is one of the two fault currents; PFC is the greater of PSCC and PEFC: record that as PFC"),
    (("Load",), ("load_type", "design_current_a"),
     "may be the kind of load (lighting/other) or the design current Ib"),
    (("Disconnection time",), ("max_disconnection_s", "rcd_trip_ms"),
     "may be the maximum disconnection time permitted or a measured trip time"),
    (("Ph",), ("phases",),
     "may be the number of phases or which phase (L1, L2, L3) the circuit is on"),
    (("Form",), ("circuit_form",),
     "may be ring or radial, or a form of separation"),
    (("IR", "Insulation", "Insulation resistance"), ("ir_le_mohm", "ir_ll_mohm", "ir_test_v"),
     "does not say between which conductors (L-E or L-L/L-N) or whether it is the test voltage"),
    (("R1", "Rn"), ("ring_r1_ohm", "ring_rn_ohm", "r1_r2_ohm"),
     "upper-case R1 and Rn are a radial's conductor resistances (no field: give R1+R2); "
     "a ring's end-to-end readings are lower-case r1 and rn"),
    (("r2",), ("ring_r2_ohm", "r2_ohm"),
     "lower-case r2 is a ring's end-to-end cpc reading, upper-case R2 the cpc's continuity"),
)

# Exact spellings where case is the meaning (checked before folding); ``rcd`` is the notation input,
# while ``RCD`` stays ambiguous.
_CASED: dict[str, str] = {"r1": "ring_r1_ohm", "rn": "ring_rn_ohm", "R2": "r2_ohm", "rcd": "rcd"}


@dataclass(frozen=True, slots=True)
class Label:
    """What a header cell or key means: one ``field`` (with a header unit), or ``fields`` it could mean."""

    field: str | None
    unit: str | None = None
    fields: tuple[str, ...] = ()
    why: str = ""
    scope: str | None = None  # "board" / "installation": the label names that record's fact only

    @property
    def ambiguous(self) -> bool:
        return self.field is None and bool(self.fields)


def _unit_free(name: str) -> str:
    """``zs_ohm`` → ``zs``, ``device_rating_a`` → ``device_rating``."""
    spec = FIELDS.get(name) or BOARD_FIELDS.get(name) or INSTALLATION_FIELDS.get(name)
    if spec is not None and spec.kind in ("reading", "number"):
        return re.sub(r"_(ohm|mohm|ka|ma|a|v|s|ms|c|m|mm2|mv_per_a_m)$", "", name)
    return name


def _build() -> tuple[dict[str, str], dict[str, Label], dict[str, Label]]:
    table: dict[str, str] = {}
    for name, labels in _TRADE_LABELS.items():
        for label in labels:
            table.setdefault(fold(label), name)
    ambiguous: dict[str, Label] = {}
    for labels, fields, why in _AMBIGUOUS_LABELS:
        for label in labels:
            ambiguous[fold(label)] = Label(None, None, fields, why)
    for name in _OWN_NAMES:  # a field's own name always means that field
        if name in _CASED and fold(name) in ambiguous:
            continue  # spelt exactly (rcd), never folded into an ambiguous label (RCD)
        table[fold(name)] = name
        ambiguous.pop(fold(name), None)
    for name in _OWN_NAMES:  # its unit-free form too, unless testers read it otherwise
        short = fold(_unit_free(name))
        if short not in ambiguous:
            table.setdefault(short, name)
    for key in ambiguous:
        table.pop(key, None)
    scoped = {fold(label): Label(name, scope=scope)
              for (name, scope), labels in _SCOPED_LABELS.items() for label in labels}
    return table, ambiguous, scoped


ALIASES, AMBIGUOUS, SCOPED = _build()
"""Folded label → field name; folded label → the fields an ambiguous label could mean; folded
label → the field of one scope it names (``PFC at board``)."""

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


def _lookup(label: str) -> Label | None:
    cased = _CASED.get(label.strip())
    if cased is not None:
        return Label(cased)
    folded = fold(label)
    if folded in ALIASES:
        return Label(ALIASES[folded])
    return SCOPED.get(folded) or AMBIGUOUS.get(folded)


@lru_cache(maxsize=4096)
def resolve_label(label: str) -> Label:
    """A header cell or key → its :class:`Label` (``field=None`` and no ``fields``: unknown).

    A bracketed unit is split off when the rest is a known label (``PFC (kA)``);
    otherwise the label is looked up whole (so ``mV/A/m`` stays a label).
    """
    bare, unit = split_header(label)
    if unit is not None:
        named = _lookup(bare)
        if named is not None:
            return Label(named.field, unit if named.field else None, named.fields, named.why, named.scope)
    whole = _lookup(label)
    if whole is not None:
        return whole
    named = _lookup(bare)
    if named is not None:
        return Label(named.field, unit if named.field else None, named.fields, named.why, named.scope)
    return Label(None)


def field_for_label(label: str) -> tuple[str | None, str | None]:
    """A header cell or key → ``(field, unit from the header)``; ``(None, None)`` if unknown or ambiguous."""
    found = resolve_label(label)
    return found.field, found.unit


@lru_cache(maxsize=1024)
def suggestion(label: str) -> str | None:
    """The nearest known label, for an unknown one's warning (``Zss`` → ``zs``), or None."""
    close = difflib.get_close_matches(fold(label), [*ALIASES, *SCOPED], n=1, cutoff=0.75)
    return close[0] if close else None
