"""One JSON encoder for every answer: orjson, installed as the app's Flask JSON provider.

Invariants:
- Every JSON body the app writes (a view's data serialised by its schema, a
  problem document, a rendered verify answer) goes through :class:`OrjsonProvider`:
  keys in the order given (never sorted), UTF-8 text (no ``\\u`` escapes), ``NaN``
  and infinities never written (orjson writes ``null`` for them, as JSON has none).
- orjson is used because a verdicts answer is large (hundreds of kB for a board)
  and the standard library's encoder took a tenth of a verify request (tests/bench).
- Types orjson does not know (``Decimal``, sets, ``Reading``-like objects with
  ``to_json``) fall back to :func:`_default`; anything else is a ``TypeError``
  (our bug, answered as a 500 problem, never a half-written body).
- Reading request bodies is not done here: ``api.intake`` parses them, with the
  checks a client's document needs (depth, duplicate keys, number range).
"""

from __future__ import annotations

import decimal
from typing import Any

import orjson
from flask import Flask, Response
from flask.json.provider import JSONProvider

__all__ = ["OrjsonProvider", "dumps_bytes"]

_OPTIONS = orjson.OPT_NON_STR_KEYS


def _default(value: Any) -> Any:
    if isinstance(value, decimal.Decimal):
        return float(value)
    if isinstance(value, set | frozenset):
        return sorted(value)
    to_json = getattr(value, "to_json", None)
    if callable(to_json):
        return to_json()
    raise TypeError(f"cannot encode {type(value).__name__} as JSON")


def dumps_bytes(data: Any) -> bytes:
    """``data`` as UTF-8 JSON bytes, exactly as every answer encodes it."""
    return orjson.dumps(data, default=_default, option=_OPTIONS)


class OrjsonProvider(JSONProvider):
    """Flask's JSON provider interface over orjson (``app.json``)."""

    mimetype = "application/json"

    def __init__(self, app: Flask) -> None:
        super().__init__(app)

    def dumps(self, obj: Any, **kwargs: Any) -> str:
        return dumps_bytes(obj).decode("utf-8")

    def loads(self, s: str | bytes, **kwargs: Any) -> Any:
        return orjson.loads(s)

    def response(self, *args: Any, **kwargs: Any) -> Response:
        data = self._prepare_response_obj(args, kwargs)
        return Response(dumps_bytes(data), mimetype=self.mimetype)
