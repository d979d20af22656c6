"""Shared hypothesis strategies: circuit records, however odd, as the engine can hold them.

Two ways in, both reusable:
- :func:`record_inputs` — loose JSON-like dicts for :func:`engine.build_record`
  (numbers, unit strings, bounded and over-range text, zeros, huge numbers,
  words testers write), the path every adapter and the API take.
- :func:`records` — :class:`engine.CircuitRecord` built directly with any value
  its field types allow once built: finite design numbers and readings of
  either sign (zero and negative ones are what the engine must never judge),
  temperatures in the accepted range, every choice, readings with every
  relation including over range without a number, and fields remembered as
  rejected at intake.
"""

from __future__ import annotations

from typing import Any

from hypothesis import strategies as st

from engine import FIELDS, CircuitRecord, Reading

__all__ = ["reading_texts", "readings", "record_inputs", "records"]

_HUGE = 1e300

#: Finite non-negative numbers, weighted towards the edges: zero, tiny, huge.
numbers = st.one_of(
    st.sampled_from([0.0, 1e-300, 5e-324, 0.001, 0.5, 1.0, 30.0, 230.0, 999.0, 1e9, _HUGE, 1.7e308]),
    st.floats(min_value=0.0, max_value=1e6, allow_nan=False, allow_infinity=False),
    st.floats(min_value=0.0, max_value=1.7e308, allow_nan=False, allow_infinity=False),
)
temperatures = st.floats(min_value=-60.0, max_value=250.0, allow_nan=False)
#: Any finite number a caller may put in a record, negative ones included.
signed_numbers = st.one_of(numbers, numbers.map(lambda x: -x), st.sampled_from([-0.0, -1e-12, -0.5]))


@st.composite
def readings(draw: st.DrawFn) -> Reading:
    """Any reading a record can hold: exact, ``>``/``<`` bounded, or over range (``OL``)."""
    relation = draw(st.sampled_from(["=", ">", "<", "OL"]))
    if relation == "OL":
        return Reading(value=None, relation=">", text="OL")
    return Reading(value=draw(signed_numbers), relation=relation)


def _field_value(name: str) -> st.SearchStrategy[Any]:
    spec = FIELDS[name]
    if spec.kind == "reading":
        return readings()
    if spec.kind == "choice":
        return st.sampled_from(spec.choices)
    if spec.kind == "flag":
        return st.booleans()
    if spec.kind == "count":
        return st.sampled_from([int(c) for c in spec.choices])
    if spec.kind == "number":
        return temperatures if spec.unit == "degC" else signed_numbers
    if name == "device_standard":
        return st.sampled_from(["BS EN 60898", "BS EN 61009-1", "BS 88-2", "BS 88-3", "BS 3036",
                                "BS 1362", "BS 1361", "BS 88-2.2", "BS EN 60947-2", "IEC 60898"])
    return st.text(max_size=12)


_OPTIONAL = tuple(n for n in FIELDS if n not in ("board", "circuit"))


@st.composite
def records(draw: st.DrawFn) -> CircuitRecord:
    """A record with any subset of fields set to any value its type allows."""
    names = draw(st.lists(st.sampled_from(_OPTIONAL), unique=True, max_size=len(_OPTIONAL)))
    values = {name: draw(_field_value(name)) for name in names}
    refused = draw(st.lists(st.sampled_from(_OPTIONAL), unique=True, max_size=4))
    rejected = {name: "refused text" for name in refused if name not in values}
    board = draw(st.sampled_from(["DB1", "DB2"]))
    circuit = draw(st.sampled_from(["1", "2", "3"]))
    return CircuitRecord(board=board, circuit=circuit, rejected=rejected, **values)


#: Reading text as meters and spreadsheets write it.
reading_texts = st.one_of(
    st.sampled_from(["OL", "> 999 MΩ", ">999", "<0.01", "0", "0.82 Ω", "350 mΩ", "---", "n/a",
                     "> 2000 Ω", "1e300", "∞", "0.000", "2 GΩ", "18 ms", "1.6 kA"]),
    numbers.map(repr),
    st.tuples(st.sampled_from(["", ">", "<"]), numbers).map(lambda t: f"{t[0]}{t[1]!r}"),
)


@st.composite
def record_inputs(draw: st.DrawFn) -> dict[str, Any]:
    """Loose input for :func:`engine.build_record`, as an adapter would hand it over."""
    names = draw(st.lists(st.sampled_from(_OPTIONAL), unique=True, max_size=len(_OPTIONAL)))
    out: dict[str, Any] = {"board": "DB1", "circuit": draw(st.sampled_from(["1", "2"]))}
    for name in names:
        spec = FIELDS[name]
        if spec.kind == "reading":
            out[name] = draw(st.one_of(reading_texts, numbers))
        elif spec.kind in ("number",):
            out[name] = draw(st.one_of(temperatures if spec.unit == "degC" else numbers,
                                       st.sampled_from(["0", "abc", "-1", ">5"])))
        else:
            out[name] = draw(st.one_of(_field_value(name), st.sampled_from(["", "yes", "x", "PME"])))
    return out
