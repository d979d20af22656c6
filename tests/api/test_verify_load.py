"""``load_verify_request`` is ``VerifyRequestSchema().load``, key order included, for any document.

The fast path (a valid body recognised without the schema's per-field machinery)
must never accept what marshmallow rejects, never reject what it accepts, and
hand back the same dict. The reference is marshmallow itself, a library outside
the project: every document is loaded both ways and the answers compared.
"""

from __future__ import annotations

from typing import Any

from hypothesis import given, settings
from hypothesis import strategies as st
from marshmallow import ValidationError

from api.schemas.records import VerifyRequestSchema, load_verify_request
from engine import FIELDS

_NAMES = [*FIELDS, "not_a_field"]
_JSON_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-5, 10**6),
                          st.floats(allow_nan=False, allow_infinity=False), st.text(max_size=8))
_VALUES = st.one_of(_JSON_SCALARS, st.lists(st.integers(), max_size=2),
                    st.dictionaries(st.text(max_size=3), st.integers(), max_size=1))
_CIRCUIT = st.dictionaries(st.sampled_from(_NAMES), _VALUES, max_size=8)
_VALID_CIRCUIT = st.fixed_dictionaries(
    {"board": st.sampled_from(["DB1", "DB2"]), "circuit": st.sampled_from(["1", "2", 3])},
    optional={"zs_ohm": st.one_of(st.floats(0, 5), st.sampled_from(["0.8 Ω", "OL", "> 2"])),
              "rcd_trip_ms": st.integers(0, 300), "polarity_ok": st.booleans(),
              "phases": st.sampled_from([1, 3, "3"]),
              "description": st.one_of(st.none(), st.text(max_size=5))})
_DOCUMENTS = st.one_of(
    st.fixed_dictionaries({"circuits": st.lists(_VALID_CIRCUIT, max_size=4)},
                          optional={"ruleset": st.one_of(st.text(max_size=5), st.none(), st.integers())}),
    st.fixed_dictionaries({"circuits": st.lists(st.one_of(_CIRCUIT, _VALID_CIRCUIT, _JSON_SCALARS),
                                                max_size=4)},
                          optional={"ruleset": _JSON_SCALARS, "extra": _JSON_SCALARS}),
    _JSON_SCALARS,
    st.lists(_VALID_CIRCUIT, max_size=2),
)


def _both(document: Any) -> tuple[Any, Any]:
    def attempt(load: Any) -> Any:
        try:
            return ("ok", list(_ordered(load(document))))
        except ValidationError as exc:
            return ("error", exc.messages)
    return attempt(VerifyRequestSchema().load), attempt(load_verify_request)


def _ordered(loaded: dict[str, Any]) -> list[Any]:
    """The loaded document with every dict's key order made visible."""
    return [(key, [list(c.items()) for c in value] if key == "circuits" else value)
            for key, value in loaded.items()]


@settings(max_examples=400, deadline=None)
@given(_DOCUMENTS)
def test_same_answer_as_marshmallow(document: Any) -> None:
    expected, got = _both(document)
    assert got == expected


def test_a_valid_body_in_any_key_order_comes_back_in_the_schemas_order() -> None:
    document = {"circuits": [{"zs_ohm": 0.41, "circuit": "1", "board": "DB1"}], "ruleset": "iec-60364"}
    expected, got = _both(document)
    assert expected[0] == "ok"
    assert got == expected
    assert list(load_verify_request(document)) == ["ruleset", "circuits"]


def test_each_rejection_reaches_marshmallows_message() -> None:
    for document in ({"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": True}]},  # boolean reading
                     {"circuits": [{"board": "DB1", "circuit": None}]},  # required key null
                     {"circuits": [{"board": "DB1", "circuit": "1", "nope": 1}]},  # unknown field
                     {"circuits": [{"circuit": "1"}]},  # required key missing
                     {"circuits": [{}] * 10001},  # over the length limit
                     {"circuits": "DB1"}, {"ruleset": None, "circuits": []}):
        expected, got = _both(document)
        assert expected[0] == "error"
        assert got == expected
