"""The stored records' merge rule (api/db/merging.py): later wins per field, whether the later
statement is a value, a refusal or an N/A/LIM mark; a refusal never leaves an older value standing.

Reference: the rule itself ("readings merge into the job's circuit records, later readings win,
earlier kept in history", api/README.md), checked against a direct model: replaying the statements
one field at a time.
"""

from __future__ import annotations

from typing import Any

from hypothesis import given
from hypothesis import strategies as st

from api.db.merging import history_entries, merge_fields

FIELDS = ("zs_ohm", "test_temp_c", "r1_r2_ohm")


def test_a_value_clears_an_earlier_refusal_and_mark() -> None:
    """A valid value after a refusal or a mark stands alone."""
    current = {"rejected": {"test_temp_c": "-300"}, "marks": {"zs_ohm": "LIM"}}
    assert merge_fields(current, {"test_temp_c": 18, "zs_ohm": 0.5}) == {"test_temp_c": 18, "zs_ohm": 0.5}


def test_a_refusal_replaces_an_earlier_value() -> None:
    """The newest input about a field was unreadable: the older value no longer stands (checks say
    incomplete naming the refused text); the untouched fields stay."""
    merged = merge_fields({"test_temp_c": 20, "zs_ohm": 0.4}, {"rejected": {"test_temp_c": "−300 °C"}})
    assert merged == {"zs_ohm": 0.4, "rejected": {"test_temp_c": "−300 °C"}}


def test_a_mark_replaces_a_value_and_the_inputs_are_not_changed() -> None:
    """LIM after a value: the field is marked, not valued; neither input dict is mutated."""
    current: dict[str, Any] = {"zs_ohm": 0.4, "rejected": {"r1_r2_ohm": "x"}}
    incoming: dict[str, Any] = {"marks": {"zs_ohm": "LIM"}}
    merged = merge_fields(current, incoming)
    assert merged == {"rejected": {"r1_r2_ohm": "x"}, "marks": {"zs_ohm": "LIM"}}
    assert current == {"zs_ohm": 0.4, "rejected": {"r1_r2_ohm": "x"}}
    assert incoming == {"marks": {"zs_ohm": "LIM"}}


def test_history_keeps_every_statement() -> None:
    """History rows: values as they are, refusals and marks as small objects."""
    statement = {"zs_ohm": 0.4, "rejected": {"test_temp_c": "-300"}, "marks": {"r2_ohm": "N/A"}}
    assert list(history_entries(statement)) == [
        ("zs_ohm", 0.4), ("test_temp_c", {"rejected": "-300"}), ("r2_ohm", {"mark": "N/A"})]


_STATEMENT = st.sampled_from(FIELDS).flatmap(lambda f: st.one_of(
    st.builds(lambda v: {f: v}, st.floats(0.01, 5)),
    st.builds(lambda t: {"rejected": {f: t}}, st.text(min_size=1, max_size=4)),
    st.builds(lambda m: {"marks": {f: m}}, st.sampled_from(["N/A", "LIM"]))))


@given(st.lists(_STATEMENT, max_size=12))
def test_merging_equals_replaying_each_field(statements: list[dict[str, Any]]) -> None:
    """Any sequence of statements merges to the state a per-field replay gives (last statement wins)."""
    merged: dict[str, Any] = {}
    last: dict[str, tuple[str, Any]] = {}
    for statement in statements:
        merged = merge_fields(merged, statement)
        for field, (state, value) in _states(statement).items():
            last[field] = (state, value)
    assert _states(merged) == last


def _states(record: dict[str, Any]) -> dict[str, tuple[str, Any]]:
    out = {f: ("value", v) for f, v in record.items() if f not in ("rejected", "marks")}
    out.update({f: ("rejected", t) for f, t in record.get("rejected", {}).items()})
    out.update({f: ("mark", m) for f, m in record.get("marks", {}).items()})
    return out
