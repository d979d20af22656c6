"""Request limits: the body's size as it is read (413), NUL in a path or query (400), the rate
per API key (429 + Retry-After), and the row and line limits every body reader gets.

Invariants:
- The body of a POST, PUT, PATCH or DELETE is read once, here, before any view or the
  Idempotency-Key check sees it, and only after the key check and the rate limit: a
  stranger cannot make the server read 16 MiB. A declared ``Content-Length`` over
  ``OHMTALLY_MAX_UPLOAD_BYTES`` is refused before a byte is read; any other body (chunked,
  or a length that lies) is read through werkzeug's ``LimitedStream`` capped at one byte
  more than the limit, so memory never holds more than that, and a body that reaches that
  byte is refused whole (413 ``body_too_large``) — never cut and taken. Such a body is not
  kept (it was not read to its end), and the problem says so.
- Rows and lines are limited per body by :class:`api.intake.line_scan.BodyLimits`
  (:func:`body_limits`), checked by :mod:`api.intake.bodies` the same way for every
  media type and adapter.
- A NUL (``%00``) in a query parameter is a 400 naming the parameter, in the path a 404:
  no text column (PostgreSQL) can hold it, and no name of ours contains it.
- The rate limit counts per API key id (``key:<id>``); with no key (auth off, or a
  request refused before a key was found) per client address. Health is never counted,
  so a load balancer's probe cannot lock a client out.
- The limit is the configured one whatever the worker count: a shared store
  (``redis://``) counts for every worker and host; with ``memory://`` each of
  ``OHMTALLY_WORKERS`` processes counts alone and allows ``RATE_LIMIT / WORKERS``
  (never more than configured in all; a limit too small to divide is refused at start).
- A refused request is a problem+json 429 carrying ``Retry-After`` (seconds,
  RFC 9110 §10.2.3) until the window frees a request.
"""

from __future__ import annotations

import math
import time
from typing import Any

from flask import Flask, current_app, g, request
from flask_limiter import Limiter
from flask_limiter.errors import RateLimitExceeded
from limits import parse_many
from werkzeug.exceptions import RequestEntityTooLarge

from api.errors import ApiError, problem_response
from api.intake.line_scan import BodyLimits
from api.settings import Settings, SettingsError

__all__ = ["body_limits", "divided_limit", "init_app", "rate_key"]

_BODY_METHODS = frozenset({"POST", "PUT", "PATCH", "DELETE"})


def rate_key() -> str:
    key_id = g.get("api_key_id")
    if key_id is not None:
        return f"key:{key_id}"
    return f"addr:{request.remote_addr or 'unknown'}"


def body_limits() -> BodyLimits:
    """The request's limits, from the app's settings."""
    settings: Settings = current_app.extensions["ohmtally.settings"]
    return BodyLimits(max_bytes=settings.max_upload_bytes, max_rows=settings.max_rows,
                      max_line_bytes=settings.max_line_bytes, max_values=settings.max_values)


def divided_limit(limit: str, workers: int) -> str:
    """``limit`` (flask-limiter syntax) as each of ``workers`` processes counting alone must apply it."""
    if workers <= 1 or not limit:
        return limit
    parts = []
    for item in parse_many(limit):
        share = item.amount // workers
        if share < 1:
            raise SettingsError(f"OHMTALLY_RATE_LIMIT {limit!r} cannot be shared by {workers} workers "
                                "counting alone (memory://): use fewer workers, a larger limit, or "
                                "OHMTALLY_RATE_LIMIT_STORAGE=redis://…")
        parts.append(f"{share} per {item.multiples} {item.GRANULARITY.name}")
    return "; ".join(parts)


def _too_large(most: int, declared: int | None) -> ApiError:
    seen = f"declares {declared} bytes" if declared is not None else f"is longer than {most} bytes"
    return ApiError(413, "body_too_large",
                    f"the body {seen}; the most one body may carry is {most} bytes "
                    "(OHMTALLY_MAX_UPLOAD_BYTES). It was refused as it arrived and is not kept: "
                    "split it into several posts",
                    errors=[{"pointer": "", "code": "body_too_large", "reason": f"more than {most} bytes"}],
                    extra={"kept": False})


def _read_body() -> None:
    """Read the body once, bounded (see the invariants); later readers get these bytes."""
    if request.method not in _BODY_METHODS:
        return
    most = current_app.extensions["ohmtally.settings"].max_upload_bytes
    declared = request.content_length
    if declared is not None and declared > most:
        raise _too_large(most, declared)
    try:
        body = request.get_data(cache=True)  # MAX_CONTENT_LENGTH = most + 1 (api.app)
    except RequestEntityTooLarge:
        raise _too_large(most, None) from None
    if len(body) > most:
        raise _too_large(most, None)


def _shown(text: str) -> str:
    return text.replace("\x00", "\\u0000")


def _refuse_nul() -> None:
    if "\x00" in request.path:  # names nothing: before any hook stores the path (Idempotency-Key)
        raise ApiError(404, "not_found", "the path holds U+0000 (%00), which names nothing",
                       errors=[{"parameter": "path", "code": "nul_character", "reason": "holds %00"}])
    for name, value in request.args.items(multi=True):
        if "\x00" in name or "\x00" in value:
            raise ApiError(400, "nul_character", f"the query parameter {_shown(name)!r} holds U+0000 (%00)",
                           errors=[{"parameter": _shown(name), "code": "nul_character",
                                    "reason": "holds %00, which no text can store"}])


def init_app(app: Flask) -> None:
    settings: Settings = app.extensions["ohmtally.settings"]
    shared = not settings.rate_limit_storage.startswith("memory://")
    own = settings.rate_limit if shared else divided_limit(settings.rate_limit, settings.workers)
    limiter = Limiter(rate_key, app=app, default_limits=[own] if own else [],
                      storage_uri=settings.rate_limit_storage, headers_enabled=False,
                      key_prefix=settings.rate_limit_prefix,
                      enabled=bool(settings.rate_limit),
                      # a shared store that stops answering: each worker counts alone meanwhile
                      in_memory_fallback_enabled=shared,
                      in_memory_fallback=[divided_limit(settings.rate_limit, settings.workers)]
                      if shared and settings.rate_limit else None)
    # probes are never counted: a load balancer's checks must not lock a client out
    limiter.request_filter(lambda: request.path.rstrip("/") in ("/v1/health", "/v1/ready"))
    app.extensions["ohmtally.limiter"] = limiter
    app.before_request(_refuse_nul)
    app.before_request(_read_body)  # after the key check and the rate limit, before idempotency

    @app.errorhandler(RateLimitExceeded)
    def _too_many(_error: RateLimitExceeded) -> Any:
        found = limiter.current_limit
        wait = 60
        if found is not None:  # seconds until the window frees a request, never past the window
            wait = max(1, min(math.ceil(found.reset_at - time.time()), found.limit.get_expiry()))
        return problem_response(ApiError(
            429, "rate_limited", f"too many requests; the limit is {settings.rate_limit} per API key",
            headers={"Retry-After": str(wait)}, extra={"retry_after_s": wait}))
