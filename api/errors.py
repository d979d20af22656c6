"""The API's one root exception and its conversion to RFC 9457 problem details.

Invariants:
- Every error response of the API is ``application/problem+json`` with
  ``type``, ``title``, ``status``, ``detail``, ``code`` and ``errors`` (a list
  of ``{pointer|line, code, reason}``); it is built only in :func:`problem_response`.
- :class:`ApiError` carries a stable ``code`` a client can branch on and the
  HTTP ``status``; extra members (``choices``, ``upload`` …) go in ``extra``.
- marshmallow messages become one error per bad field with an RFC 6901 pointer
  (``/circuits/3/zs_ohm``), so a client can show the error beside the field.
- A full disk is not a server bug: :func:`storage_full` recognises it under any of its
  names (SQLite's SQLITE_FULL "database or disk is full", PostgreSQL's SQLSTATE 53100
  ``disk_full``, the OS's ENOSPC), and it is answered 507 Insufficient Storage
  (RFC 4918 §11.5) with :func:`insufficient_storage`, never 500.
"""

from __future__ import annotations

import errno
import http
import sqlite3
from collections.abc import Mapping, Sequence
from typing import Any

from flask import Response, current_app, g, json

__all__ = [
    "PROBLEM_MEDIA_TYPE",
    "ApiError",
    "escape_pointer",
    "insufficient_storage",
    "messages_to_errors",
    "problem_response",
    "storage_full",
]

PROBLEM_MEDIA_TYPE = "application/problem+json"
_TYPE_BASE = "https://ohmtally.invalid/problems/"  # stable, documented ids; not fetched


class ApiError(Exception):
    """Root of every error the API raises on purpose; becomes a problem+json response."""

    def __init__(self, status: int, code: str, detail: str, *,
                 errors: Sequence[Mapping[str, Any]] = (), title: str | None = None,
                 extra: Mapping[str, Any] | None = None,
                 headers: Mapping[str, str] | None = None) -> None:
        super().__init__(detail)
        self.status = status
        self.code = code
        self.detail = detail
        self.errors = [dict(e) for e in errors]
        self.title = title or http.HTTPStatus(status).phrase
        self.extra = dict(extra or {})
        self.headers = dict(headers or {})

    def body(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "type": _TYPE_BASE + self.code,
            "title": self.title,
            "status": self.status,
            "detail": self.detail,
            "code": self.code,
            "errors": self.errors,
        }
        for key, value in self.extra.items():
            out.setdefault(key, value)
        return out


def problem_response(error: ApiError) -> Response:
    body = error.body()
    request_id = g.get("request_id")
    if request_id:
        body.setdefault("request_id", request_id)
    response = current_app.response_class(
        json.dumps(body), status=error.status, mimetype=PROBLEM_MEDIA_TYPE)
    for name, value in error.headers.items():
        response.headers[name] = value
    return response


def storage_full(error: BaseException | None) -> bool:
    """True if ``error`` (or what it wraps: SQLAlchemy's ``orig``, a ``__cause__``) is a full disk."""
    seen = 0
    while error is not None and seen < 8:
        if isinstance(error, OSError) and error.errno == errno.ENOSPC:
            return True
        if getattr(error, "sqlite_errorcode", None) == sqlite3.SQLITE_FULL:
            return True
        if getattr(error, "sqlstate", None) == "53100":  # PostgreSQL disk_full
            return True
        error = getattr(error, "orig", None) or error.__cause__
        seen += 1
    return False


def insufficient_storage(*, kept: bool) -> ApiError:
    """The 507 problem for a full disk; ``kept``: the body itself was stored (as rejected)."""
    what = ("the body was kept as a rejected upload; nothing of it was merged" if kept
            else "nothing was stored, the body included: send it again later")
    return ApiError(507, "insufficient_storage", f"the server's storage is full; {what}",
                    errors=[{"pointer": "", "code": "insufficient_storage", "reason": "storage full"}],
                    extra={"kept": kept}, headers={"Retry-After": "60"})


def escape_pointer(token: str) -> str:
    """RFC 6901: ``~`` → ``~0``, ``/`` → ``~1``."""
    return token.replace("~", "~0").replace("/", "~1")


def messages_to_errors(messages: Any, pointer: str = "") -> list[dict[str, Any]]:
    """Flatten marshmallow's nested messages into ``{pointer, code, reason}`` entries."""
    out: list[dict[str, Any]] = []
    if isinstance(messages, Mapping):
        for key, value in messages.items():
            if key == "_schema":
                out.extend(messages_to_errors(value, pointer))
            else:
                out.extend(messages_to_errors(value, f"{pointer}/{escape_pointer(str(key))}"))
    elif isinstance(messages, list | tuple):
        for item in messages:
            if isinstance(item, str):
                out.append({"pointer": pointer, "code": _code_for(item), "reason": item})
            else:
                out.extend(messages_to_errors(item, pointer))
    else:
        out.append({"pointer": pointer, "code": "invalid", "reason": str(messages)})
    return out


def _code_for(message: str) -> str:
    lowered = message.lower()
    if lowered.startswith("unknown field"):
        return "unknown_field"
    if lowered.startswith("missing data") or "required" in lowered:
        return "missing"
    if lowered.startswith(("not a valid", "invalid", "expected ")):
        return "wrong_type"
    return "invalid"
