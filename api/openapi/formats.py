"""Named string formats for what the engine reads, so the document states it for every field.

A reading is ``0.82``, ``"350 mΩ"``, ``"> 299 MΩ"`` or ``"OL"``; a choice is ``"TN-C-S"`` or
``"PME"``; a board is any name but ``"-"`` or ``"N/A"``. No regular expression states
those grammars (units through pint, digit grouping, trade aliases), so each field's string
side names a *format* (JSON Schema 2020-12 §7: a format may name a grammar defined
elsewhere), defined here in words and listed in the document's ``info.description``. The
number side states its range exactly with JSON Schema keywords.

Invariants:
- Every property of a record body (``CircuitIn``, ``InstallationIn``, ``BoardIn``) whose
  name the engine's field tables know gets the format of its field spec's kind and unit:
  :func:`format_of` is the one rule, read off :class:`engine.FieldSpec`.
- Numbers: a design value (kind ``number``) is above zero, a temperature lies in
  −60…250 °C (``engine.coerce``), a count is one of its choices; every number lies within
  ±(2^53 − 1), the integers every JSON reader holds exactly (RFC 7493 §2.2), which the
  server's JSON reader enforces for integers.
- A notation field (``device``, ``cable``, ``rcd``) gives split fields
  (:data:`engine.record_notation.NOTATION_SPLIT`); given beside them, the two must agree
  (else 422 ``notation_conflict``). The document states the simple rule that never
  conflicts: a record with a notation field leaves its split fields out (or null)
  (``dependentSchemas``). An RCBO's ``device`` (``RCBO B20 30mA A``) also gives the rcd
  fields, so it must agree with an ``rcd`` beside it: that is said in words only.
- A site document and its records list the names to send (``additionalProperties: false``);
  a name no field has is not refused but read as nothing with a warning
  (``api.intake.site_document``): their description says so, and ``x-ohmtally-other-names:
  warning`` says it to a program (the fuzz test reads it).
- A site document states at least one of circuits, installation or boards (``anyOf``
  required; else 422 ``nothing_stated``): :func:`record_statement`.
- tests/api/test_openapi_formats.py checks each format against the server: values of each,
  generated, are taken whole by ``POST /v1/verify`` (and cursors, CSV, secrets where read).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from marshmallow import fields

from api.openapi.constraints import NOT_BLANK_TEXT
from api.schemas.records import BoardInSchema, CircuitInSchema, InstallationInSchema, VerifyRequestSchema
from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS, FieldSpec
from engine.record_notation import NOTATION_INPUTS, NOTATION_SPLIT

__all__ = ["FORMATS", "OTHER_NAMES_EXTENSION", "SAFE_INTEGER", "field_attribute", "format_of",
           "formats_table", "record_statement"]

SAFE_INTEGER = 2**53 - 1
_MARKS = ("Every field but `board` and `circuit` also reads `N/A` (does not apply) and `LIM` (a "
          "limitation: not tested), kept as marks, and `-`, `none`, `null` or empty text, meaning absent.")
_UNIT_SLUGS = {"mm**2": "mm2", "dimensionless": "ratio", "mV/A/m": "mV-A-m"}
_SYMBOLS = {"ohm": "Ω", "megaohm": "MΩ", "degC": "°C", "mm**2": "mm²", "dimensionless": "a plain ratio"}


def _slug(unit: str | None) -> str:
    return _UNIT_SLUGS.get(unit or "", unit or "")


def format_of(spec: FieldSpec) -> str | None:
    """The format of the string side of ``spec``'s values (``None``: free text)."""
    if spec.kind == "reading":
        return f"reading:{_slug(spec.unit)}"
    if spec.kind == "number":
        return "temperature" if spec.unit == "degC" else f"design-value:{_slug(spec.unit)}"
    if spec.kind in ("choice", "count"):
        return f"choice:{spec.name}"
    if spec.kind == "flag":
        return "flag"
    if spec.name in ("board", "circuit"):
        return "reference"
    return None


def _meanings() -> dict[str, str]:
    out: dict[str, str] = {
        "reference": "a board or circuit reference: any text but empty text, a dash, `none`, `null` or a "
                     "cell word (`N/A`, `LIM`, `not tested` …), which name no board or circuit",
        "flag": "yes or no: `true`/`false`, `yes`/`no`, `y`/`n`, `1`/`0`, `ok`, `pass`/`fail`, `✓`/`✗`",
        "temperature": "°C within −60…250, in fixed point: `20`, `\"20 °C\"`, `\"20C\"`",
        "page-cursor": "a `next_cursor` this API handed out, unchanged (empty: the first page); any other "
                       "value is a 400 `bad_cursor`",
        "readings-csv": "CSV whose header row names the circuit and board columns (`Board`, `Circuit`, "
                        "`Cct`, `Way` …), or board facts (`Zdb`, `Location` …), as `GET /v1/adapters` "
                        "describes; bad rows are listed in `rejected`; a header of no known column is a 422 "
                        "`unrecognised_header`",
        "whsec": "a Standard Webhooks secret: `whsec_` and the standard base64 of 24–64 random bytes taking "
                 "at least 16 distinct values",
    }
    for spec in (*FIELDS.values(), *INSTALLATION_FIELDS.values(), *BOARD_FIELDS.values()):
        name = format_of(spec)
        if name is None or name in out:
            continue
        unit = _SYMBOLS.get(spec.unit or "", spec.symbol or spec.unit or "")
        if spec.kind == "reading":
            out[name] = (f"a reading in {unit} or another unit of its dimension, as a meter or schedule "
                         "prints it: `0.82`, `\"0.35 k\u03a9\"`, a bound (`\"> 299\"`, `\"< 0.01\"`), "
                         "over range (`OL`, `∞`, `---`)")
        elif spec.kind == "number":
            out[name] = (f"a design value above zero in {unit} or another unit of its dimension: `32`, "
                         f"`\"32 {spec.symbol or ''}\"`; never a bound or over range")
        elif spec.kind == "count":
            out[name] = " or ".join(f"`{c}`" for c in spec.choices) + " (as text or a JSON integer)"
        else:
            choices = ", ".join(f"`{c}`" for c in spec.choices)
            out[name] = (f"one of {choices}, in any case, with or without spaces, hyphens, dots or "
                         "slashes, or a trade alias of one (`PME`, `MCB`, `SWA` …)")
    for name in sorted(NOTATION_INPUTS):
        split = ", ".join(f"`{field}`" for field in NOTATION_SPLIT[name])
        out[f"notation:{name}"] = (f"`{name}` in trade notation, read into {split}, which are then left out "
                                   "(or null): `B32`, `BS 88-3 32A`, `2.5/1.5`, `30mA A`; an RCBO's `device` "
                                   "(`RCBO B20 30mA A`) also gives the rcd fields and must agree with an "
                                   "`rcd` "
                                   "beside it (else 422 `notation_conflict`); `not tested` is not read here")
    return out


FORMATS: Mapping[str, str] = _meanings()
_TABLES: dict[type[Any], Mapping[str, FieldSpec]] = {
    CircuitInSchema: FIELDS, InstallationInSchema: INSTALLATION_FIELDS, BoardInSchema: BOARD_FIELDS}


def formats_table() -> str:
    """The formats as a Markdown table, for the document's description."""
    rows = "\n".join(f"| `{name}` | {meaning} |" for name, meaning in sorted(FORMATS.items()))
    return ("\n\n## String formats\n\nText fields name a `format` whose grammar is the engine's; a JSON "
            f"number is accepted where the type allows one, within the stated range. {_MARKS}\n\n"
            f"| format | what the server reads |\n|---|---|\n{rows}\n")


# Read by api.intake.site_document: a name no field has is left unread and reported, not refused.
_READ_AS_DOCUMENT = frozenset({VerifyRequestSchema, CircuitInSchema, InstallationInSchema, BoardInSchema})
OTHER_NAMES_EXTENSION = "x-ohmtally-other-names"
_OTHER_NAMES = ("Send only the names listed. A name that is no field (nor an alias of one) is not read: "
                "it is not refused, and the answer's `warnings` name it (`unknown_field`, "
                "`ambiguous_label`).")


def record_statement(schema: Any, definition: Mapping[str, Any]) -> dict[str, Any]:
    """Keywords of a whole schema: a notation field excludes its split fields; a site document
    states at least one of its parts (else 422 ``nothing_stated``; an empty list is a statement)."""
    cls = schema if isinstance(schema, type) else type(schema)
    found: dict[str, Any] = {}
    if cls in _READ_AS_DOCUMENT:
        found[OTHER_NAMES_EXTENSION] = "warning"
        found["description"] = " ".join(filter(None, (definition.get("description"), _OTHER_NAMES)))
    if cls is CircuitInSchema:
        found["dependentSchemas"] = {
            name: {"properties": {split: {"type": "null"} for split in NOTATION_SPLIT[name]}}
            for name in sorted(NOTATION_INPUTS)}
    if cls is VerifyRequestSchema:
        parts = [name for name, field in VerifyRequestSchema().fields.items()
                 if isinstance(field, fields.Nested | fields.List)]
        found["anyOf"] = [{"required": [name]} for name in parts]
    return found


def field_attribute(_converter: Any, field: Any, **_kwargs: Any) -> dict[str, Any]:
    """apispec attribute function: a record field's format and numeric range (see the invariants)."""
    table = _TABLES.get(type(getattr(field, "parent", None)))
    name = getattr(field, "name", None)
    if table is None or name is None:
        return {}
    if name in NOTATION_INPUTS and name not in table:
        return {"format": f"notation:{name}"}
    spec = table.get(name)
    if spec is None:
        return {}
    found: dict[str, Any] = {}
    fmt = format_of(spec)
    if fmt is not None:
        found["format"] = fmt
    if spec.kind == "number" and spec.unit == "degC":
        found.update(minimum=-60, maximum=250)
    elif spec.kind == "number":
        found.update(exclusiveMinimum=0, maximum=SAFE_INTEGER)
    elif spec.kind in ("reading", "text"):
        found.update(minimum=-SAFE_INTEGER, maximum=SAFE_INTEGER)
    if fmt == "reference":
        found["pattern"] = NOT_BLANK_TEXT
    if spec.kind == "count":
        found["anyOf"] = [{"type": "integer", "enum": [int(c) for c in spec.choices]},
                          {"type": "string"}, {"type": "null"}]
    return found
