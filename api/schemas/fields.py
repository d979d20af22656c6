"""A field that takes any of a few JSON types and leaves the value to the engine.

Readings are a number or a string (``0.82``, ``"> 299 MΩ"``, ``"OL"``); the
engine's parser decides whether the string is a reading. The schema only
rejects the wrong JSON type (an object, a list, a boolean for a reading) and
documents the union as an OpenAPI 3.1 type list.

:class:`WholeNumber` reads an integer as the document's JSON Schema defines one (a number
without a fraction, ``17.0`` included) and refuses ``2.5`` rather than cutting it to 2.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from marshmallow import ValidationError, fields, validate

__all__ = ["COMPACT_MEDIA_TYPE", "VIEWS", "JsonTypes", "Prepared", "WholeNumber", "json_types_attribute",
           "view_field"]

#: The compact view's media type (RFC 6838 vendor tree, RFC 6839 ``+json``): api.schemas.compact.
COMPACT_MEDIA_TYPE = "application/vnd.ohmtally.compact+json"
VIEWS = ("full", "compact")


def view_field() -> fields.String:
    """``?view=``: the full verdicts (default) or the compact rows (api.schemas.compact)."""
    return fields.String(validate=validate.OneOf(VIEWS), metadata={
        "description": "full (default): every check with its sentence and basis; compact: per check "
                       "[legend index, outcome, value, relation, limit] with a legend, served as "
                       f"{COMPACT_MEDIA_TYPE} (JSON only: not with another format)"})

_CHECKS: dict[str, Any] = {
    "string": lambda v: isinstance(v, str),
    "number": lambda v: isinstance(v, int | float) and not isinstance(v, bool),
    "integer": lambda v: isinstance(v, int) and not isinstance(v, bool),
    "boolean": lambda v: isinstance(v, bool),
}


class JsonTypes(fields.Field):  # type: ignore[type-arg]
    """Accepts a value of one of ``types`` (JSON type names) unchanged."""

    def __init__(self, *types: str, **kwargs: Any) -> None:
        unknown = set(types) - set(_CHECKS)
        if unknown:
            raise ValueError(f"unsupported JSON types {sorted(unknown)}")
        self.json_types = types
        super().__init__(**kwargs)

    def accepts(self, value: Any) -> bool:
        """Whether ``value`` is one of the field's JSON types (``None`` is the caller's concern)."""
        return any(_CHECKS[t](value) for t in self.json_types)

    def _deserialize(self, value: Any, attr: str | None, data: Mapping[str, Any] | None,
                     **kwargs: Any) -> Any:
        if self.accepts(value):
            return value
        raise ValidationError(f"expected {' or '.join(self.json_types)}, got {_json_type(value)}")


def _json_type(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int | float):
        return "number"
    if isinstance(value, str):
        return "string"
    if isinstance(value, list):
        return "array"
    return "object"


def json_types_attribute(self: Any, field: Any, ret: Mapping[str, Any], **_kwargs: Any) -> dict[str, Any]:
    """apispec attribute function: a :class:`JsonTypes` field becomes ``type: [..]``."""
    if not isinstance(field, JsonTypes):
        return {}
    types: list[str] = list(field.json_types)
    if field.allow_none:
        types.append("null")
    return {"type": types}


class Prepared(fields.List):  # type: ignore[type-arg]
    """A list the OpenAPI document describes as ``List(Nested(schema))``, whose items serialise
    themselves (``serialise(item)``; a verdict's :meth:`~engine.Verdict.as_dict`).

    Verdict lists are the bulk of every verdict answer: marshmallow's field-by-field dump
    of a nested schema costs about ten times the item's own ``as_dict`` (tests/bench), so
    the items keep one serialiser, written once, and the schema documents it. Every
    answer in the tests is checked against the served OpenAPI document, so the two
    cannot drift apart unnoticed.
    """

    def __init__(self, inner: Any, serialise: Any, **kwargs: Any) -> None:
        super().__init__(inner, **kwargs)
        self.serialise = serialise

    def _serialize(self, value: Any, attr: str | None, obj: Any, **kwargs: Any) -> Any:
        if value is None:
            return None
        serialise = self.serialise
        return [serialise(item) for item in value]


class WholeNumber(fields.Integer):
    """An integer as JSON Schema means one: ``17`` and ``17.0`` are 17; ``2.5`` is refused, never cut to 2."""

    def _validated(self, value: Any) -> int:
        if isinstance(value, float) and not value.is_integer():
            raise self.make_error("invalid", input=value)
        found: int = super()._validated(value)
        return found
