"""Hypothesis strategies for the adapter tests: circuit records and their parts."""

from __future__ import annotations

from typing import Any

from hypothesis import strategies as st

from engine import FIELDS, CircuitRecord, Reading

__all__ = ["keys", "records"]

_NO_READING = {"", "-", "–", "n/a", "na", "nt", "n.t.", "not tested", "none", "null"}
keys = st.text(alphabet="ABCDEFGHJKLMNPQRSTUVWXYZ0123456789", min_size=1, max_size=5)
_text = st.text(
    alphabet=st.characters(codec="utf-8", exclude_categories=("Cc", "Cs", "Zl", "Zp", "Zs")),
    min_size=1, max_size=20,
).filter(lambda t: t.strip().lower() not in _NO_READING and not t.startswith("#"))
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


@st.composite
def records(draw: st.DrawFn) -> CircuitRecord:
    chosen = draw(st.lists(st.sampled_from(_OPTIONAL), unique=True, max_size=12))
    values = {name: draw(_value(name)) for name in chosen}
    refused = draw(st.lists(st.sampled_from([n for n in _OPTIONAL if n not in values]), unique=True,
                            max_size=2))
    rejected = {name: draw(_refused_text) for name in refused}
    return CircuitRecord(board=draw(keys), circuit=draw(keys), **values, rejected=rejected)
