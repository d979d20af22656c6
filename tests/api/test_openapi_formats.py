"""The document's string formats agree with the server: values of each format are taken.

The formats (api/openapi/formats.py) state grammars the engine defines (readings with units,
choices with aliases, board names); :func:`format_strategies` generates values of each, and
the tests post them to the running app. The fuzz test (test_schemathesis.py) registers the
same strategies, so schemathesis generates values the document allows, not random text.
"""

from __future__ import annotations

import base64
import string
from collections.abc import Mapping
from datetime import UTC, datetime
from typing import Any

import pytest
import schemathesis
from flask import Flask
from flask.testing import FlaskClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from api.db.repository import encode_cursor
from api.openapi.formats import FORMATS, format_of
from api.webhooks.signing import MAX_SECRET_BYTES, MIN_DISTINCT_BYTES, MIN_SECRET_BYTES, SECRET_PREFIX
from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS, FieldSpec
from engine.marks import cell_mark, is_blank
from engine.record_notation import NOTATION_SPLIT
from engine.units import unit_factor

__all__ = ["format_strategies", "register_formats"]

# Words every record field but board and circuit reads: absent, N/A, LIM (engine.marks).
_MARK_WORDS = ("N/A", "n/a", "LIM", "not tested", "-", "none", "null", "")
# What a notation field reads besides notation: "not tested" is refused there (bad_notation).
_NOTATION_MARKS = ("N/A", "LIM", "-", "none", "")
_RELATIONS = ("", "", ">", "<", ">=", "≤", "> ")
_OVER_RANGE = ("OL", "∞", "---", ">")
_FLAG_WORDS = ("true", "false", "yes", "no", "Y", "n", "1", "0", "ok", "PASS", "fail", "✓", "✗")
# Trade notation as a schedule writes it (the engine's notation tests hold the grammar itself).
_NOTATION = {
    "device": ("B32", "C16", "D6", "RCBO B20 30mA A", "BS 88-3 32A", "BS 3036 15A", "BS EN 60898 B16"),
    "cable": ("2.5/1.5", "1.5/1.0", "6/2.5", "10/4"),
    "rcd": ("30mA A", "100mA S", "30 mA AC", "300mA S"),
}
_PREFIXES = ("", "m", "k", "M")


def _number(low: float, high: float, spelling: str = "{:.6g}") -> st.SearchStrategy[str]:
    values = st.floats(min_value=low, max_value=high, allow_nan=False, allow_infinity=False)
    return st.one_of(st.integers(int(low), int(high)).map(str), values.map(spelling.format))


def _units(spec: FieldSpec) -> tuple[str, ...]:
    """Spellings of ``spec``'s unit the engine reads: its symbol, SI-prefixed, and its name."""
    symbol = spec.symbol or spec.unit or ""
    found = []
    for candidate in (*(p + symbol for p in _PREFIXES), spec.unit or ""):
        try:
            unit_factor(candidate, spec.unit or "")
        except ValueError:
            continue
        found.append(candidate)
    return tuple(dict.fromkeys(found))


def _with_unit(numbers: st.SearchStrategy[str], spec: FieldSpec) -> st.SearchStrategy[str]:
    units = _units(spec)
    return st.tuples(numbers, st.sampled_from(("", *units)), st.sampled_from(("", " "))).map(
        lambda t: t[0] + (t[2] + t[1] if t[1] else ""))


def _field_strategy(spec: FieldSpec) -> st.SearchStrategy[str] | None:
    marks = st.sampled_from(_MARK_WORDS)
    if spec.kind == "reading":
        bounded = st.tuples(st.sampled_from(_RELATIONS), _with_unit(_number(-1e6, 1e6), spec)).map("".join)
        return st.one_of(bounded, st.sampled_from(_OVER_RANGE), marks)
    if spec.kind == "number" and spec.unit == "degC":
        # a temperature is written in fixed point (engine.coerce: no exponent)
        degrees = _number(-60, 250, "{:.2f}")
        return st.one_of(st.tuples(degrees, st.sampled_from(("", " °C", "C", "°C"))).map("".join), marks)
    if spec.kind == "number":
        # the bare number must stay above zero in the unit its spelling names (1e-3 mV is 1e-6 V)
        positive = st.one_of(st.integers(1, 10**6).map(str), st.floats(0.001, 1e6).map(lambda v: f"{v:.6g}"))
        return st.one_of(_with_unit(positive, spec), marks)
    if spec.kind in ("choice", "count"):
        spelled = st.sampled_from(spec.choices).flatmap(
            lambda c: st.sampled_from((c, c.lower(), c.upper(), f" {c} ")))
        return st.one_of(spelled, marks)
    if spec.kind == "flag":
        return st.one_of(st.sampled_from(_FLAG_WORDS), marks)
    if spec.name in ("board", "circuit"):
        text = st.text(alphabet=string.ascii_letters + string.digits + " -/.", min_size=1, max_size=12)
        return text.filter(lambda t: not is_blank(t) and cell_mark(t) is None)
    return None


def _secret() -> st.SearchStrategy[str]:
    key = st.binary(min_size=MIN_SECRET_BYTES, max_size=MAX_SECRET_BYTES).filter(
        lambda b: len(set(b)) >= MIN_DISTINCT_BYTES)
    return key.map(lambda b: SECRET_PREFIX + base64.b64encode(b).decode("ascii"))


def _csv() -> st.SearchStrategy[str]:
    cell = st.text(alphabet=string.ascii_letters + string.digits + " .-/>Ω", max_size=8)
    row = st.tuples(cell, cell, cell).map(lambda cells: ",".join(cells))
    return st.lists(row, max_size=5).map(lambda rows: "\n".join(["Board,Circuit,Zs", *rows]) + "\n")


def _cursor() -> st.SearchStrategy[str]:
    moments = st.datetimes(min_value=datetime(2000, 1, 1), max_value=datetime(2100, 1, 1),
                           timezones=st.just(UTC))
    return st.builds(lambda after, at: encode_cursor(after, at=at), st.integers(0, 2**63 - 1), moments)


def format_strategies() -> dict[str, st.SearchStrategy[str]]:
    """A strategy for every format of :data:`api.openapi.formats.FORMATS`."""
    found: dict[str, st.SearchStrategy[str]] = {
        "page-cursor": _cursor(), "readings-csv": _csv(), "whsec": _secret()}
    for spec in (*FIELDS.values(), *INSTALLATION_FIELDS.values(), *BOARD_FIELDS.values()):
        name = format_of(spec)
        strategy = _field_strategy(spec)
        if name is not None and strategy is not None:
            found.setdefault(name, strategy)
    for name, spellings in _NOTATION.items():
        found[f"notation:{name}"] = st.sampled_from((*spellings, *_NOTATION_MARKS))
    return found


def register_formats() -> None:
    """Teach schemathesis every format (its generator draws from these for ``format: <name>``)."""
    for name, strategy in format_strategies().items():
        schemathesis.openapi.format(name, strategy)


def _formats_in(node: Any) -> set[str]:
    if isinstance(node, Mapping):
        own = {str(node["format"])} if isinstance(node.get("format"), str) else set()
        return own.union(*(_formats_in(value) for value in node.values()))
    if isinstance(node, list):
        return set().union(*(_formats_in(item) for item in node))
    return set()


def test_every_stated_format_is_defined_and_generated(client: FlaskClient) -> None:
    """Each custom format the served document names is defined in FORMATS and has a strategy here."""
    spec = client.get("/v1/openapi.json").get_json()
    named = _formats_in(spec["paths"]) | _formats_in(spec["components"])
    # JSON Schema's own formats (draft 2020-12, 7.3: "date" and "date-time" are RFC 3339's) and OpenAPI's
    custom = {name for name in named if name not in {"date", "date-time", "binary", "uri", "int32", "int64"}}
    assert custom <= set(FORMATS), sorted(custom - set(FORMATS))
    assert set(FORMATS) <= set(format_strategies()), sorted(set(FORMATS) - set(format_strategies()))
    for name in FORMATS:
        assert f"`{name}`" in spec["info"]["description"], name


def _record(draw: st.DrawFn, table: Mapping[str, FieldSpec], strategies: Mapping[str, Any]) -> dict[str, Any]:
    record = {}
    for name, spec in table.items():
        fmt = format_of(spec)
        if fmt is not None and fmt in strategies:
            record[name] = draw(strategies[fmt])
    return record


_STRATEGIES = format_strategies()


@st.composite
def _site_document(draw: st.DrawFn) -> dict[str, Any]:
    circuit = _record(draw, FIELDS, _STRATEGIES)
    for name, split in NOTATION_SPLIT.items():  # a notation or its split fields, as the document says
        if draw(st.booleans()):
            circuit[name] = draw(_STRATEGIES[f"notation:{name}"])
            for field in split:
                circuit.pop(field, None)
    if "RCBO" in str(circuit.get("device")):  # it gives the rcd fields too (x-ohmtally-refusals)
        for field in ("rcd", *NOTATION_SPLIT["rcd"]):
            circuit.pop(field, None)
    board = _record(draw, BOARD_FIELDS, _STRATEGIES)
    board["board"] = circuit["board"]
    return {"installation": _record(draw, INSTALLATION_FIELDS, _STRATEGIES), "boards": [board],
            "circuits": [circuit]}


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(document=_site_document())
def test_a_site_document_of_generated_values_is_taken_whole(client: FlaskClient,
                                                            document: dict[str, Any]) -> None:
    """Every field of a circuit, a board and the installation holding a value of its format: 200, not 422."""
    answer = client.post("/v1/verify", json=document)
    assert answer.status_code == 200, (document, answer.get_json())


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(body=_STRATEGIES["readings-csv"])
def test_generated_csv_bodies_are_read(client: FlaskClient, body: str) -> None:
    """A readings-csv value (a recognised header, rows of any cells) is read: 200, bad rows in rejected."""
    assert client.post("/v1/verify", data=body.encode(), content_type="text/csv").status_code == 200


@settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(cursor=_STRATEGIES["page-cursor"])
def test_generated_cursors_are_taken_by_every_page(client: FlaskClient, cursor: str) -> None:
    """A page-cursor value is one the API could have handed out: every paged list answers 200."""
    job = client.post("/v1/jobs", json={"reference": "FMT-1", "site": "Format test site"}).get_json()["id"]
    for path in ("/v1/jobs", f"/v1/jobs/{job}/circuits", f"/v1/jobs/{job}/verdicts"):
        assert client.get(path, query_string={"cursor": cursor}).status_code == 200, path


@pytest.fixture
def hook_client(hook_app: Flask) -> FlaskClient:
    return hook_app.test_client()


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(secret=_STRATEGIES["whsec"])
def test_generated_secrets_sign_webhooks(hook_client: FlaskClient, secret: str) -> None:
    """A whsec value is a secret the server takes for a subscription (201), not a weak one (422)."""
    answer = hook_client.post("/v1/webhooks", json={
        "url": "http://127.0.0.1:9/hook", "events": ["job.created"], "secret": secret})
    assert answer.status_code == 201, answer.get_json()
