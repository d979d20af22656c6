"""Hypothesis strategies for the adapter tests: circuit records and their parts."""

from __future__ import annotations

from typing import Any

from hypothesis import strategies as st

from engine import FIELDS, CircuitRecord, Reading, build_record, cell_mark
from engine.marks import MARKS, is_blank
from engine.notation import NOTATION_FIELDS

__all__ = ["keys", "records"]

_NO_READING = {"", "-", "–", "n/a", "na", "nt", "n.t.", "not tested", "none", "null"}
# a reference is never a word for an empty cell (NONE, NULL) or a cell word (NA, NT, LIM): the record
# builder reads those as no reference
keys = st.text(alphabet="ABCDEFGHJKLMNPQRSTUVWXYZ0123456789", min_size=1, max_size=5).filter(
    lambda k: not is_blank(k) and cell_mark(k) is None)
_text = st.text(
    alphabet=st.characters(codec="utf-8", exclude_categories=("Cc", "Cs", "Zl", "Zp", "Zs")),
    min_size=1, max_size=20,
).filter(lambda t: t.strip().lower() not in _NO_READING and not t.startswith("#") and not is_blank(t)
         and cell_mark(t) is None)  # N/A, LIM, "not tested" are marks, not text
# meters print a few significant figures; six decimals is already more than any
_magnitude = st.floats(min_value=0, max_value=1e6, allow_nan=False).map(lambda v: round(v, 6))
# a design value (rating, size, length) is above zero: the engine refuses 0 A or 0 mm²
_design = st.floats(min_value=0.001, max_value=1e6, allow_nan=False).map(lambda v: round(v, 6))
_reading = st.one_of(
    _magnitude.map(lambda v: Reading(value=v)),
    _magnitude.map(lambda v: Reading(value=v, relation=">")),
    _magnitude.map(lambda v: Reading(value=v, relation="<")),
    st.just(Reading(value=None, relation=">")),
)
_STANDARDS = ("BS EN 60898", "BS EN 61009", "BS 88-2", "BS 88-3", "BS 3036", "BS 1362")


def _value(name: str) -> st.SearchStrategy[Any]:
    spec = FIELDS[name]
    if spec.kind == "reading":
        return _reading
    if spec.kind == "number":
        if spec.unit == "degC":
            return st.integers(min_value=-60, max_value=250).map(float)
        return _design
    if spec.kind == "choice":
        return st.sampled_from(spec.choices)
    if spec.kind == "count":
        return st.sampled_from((1, 3))
    if spec.kind == "flag":
        return st.booleans()
    if name == "device_standard":
        return st.sampled_from(_STANDARDS)
    return _text


_OPTIONAL = [n for n in FIELDS if n not in ("board", "circuit")]


# the text a refused value held: anything on one line (a record remembers it as written)
_refused_text = st.text(alphabet=st.characters(codec="utf-8", exclude_categories=("Cc", "Cs", "Zl", "Zp")),
                        max_size=20)


# trade notation as schedules write it (BS 7671 Tables 41.2-41.4 devices; line/cpc mm²; IΔn and type)
_NOTATION = {"device": ("B32", "C16", "D10", "BS 88-3 32A", "BS 3036 15A", "RCBO B20 30mA A"),
             "cable": ("2.5/1.5", "1.5/1.0", "6/2.5"), "rcd": ("30mA A", "100mA S", "30mA")}


@st.composite
def records(draw: st.DrawFn) -> CircuitRecord:
    """A record of the engine's own making: fields, trade notation, N/A / LIM marks, refused texts."""
    notation = {name: draw(st.sampled_from(_NOTATION[name]))
                for name in draw(st.lists(st.sampled_from(sorted(_NOTATION)), unique=True, max_size=2))}
    if "device" in notation and "rcd" in notation:
        notation.pop("rcd")  # an RCBO's own IΔn beside an rcd notation would be a conflict
    covered = {f for name in notation for f in NOTATION_FIELDS[name]}
    free = [n for n in _OPTIONAL if n not in covered]
    chosen = draw(st.lists(st.sampled_from(free), unique=True, max_size=12))
    values = {name: draw(_value(name)) for name in chosen}
    rest = [n for n in free if n not in values]
    refused = draw(st.lists(st.sampled_from(rest), unique=True, max_size=2))
    rejected = {name: draw(_refused_text) for name in refused}
    marked = draw(st.lists(st.sampled_from([n for n in rest if n not in rejected]), unique=True, max_size=2))
    marks = {name: draw(st.sampled_from(sorted(MARKS))) for name in marked}
    record, errors = build_record({"board": draw(keys), "circuit": draw(keys), **values, **notation,
                                   "rejected": rejected, "marks": marks})
    assert record is not None and not errors, errors
    return record
