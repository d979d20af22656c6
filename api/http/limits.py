"""Request limits: rate per API key (429 + Retry-After), rows per body and line length (413).

Invariants:
- The rate limit counts per API key id (``key:<id>``); with no key (auth off,
  or a request refused before a key was found) per client address. Health is
  never counted, so a load balancer's probe cannot lock a client out.
- A refused request is a problem+json 429 carrying ``Retry-After`` (seconds,
  RFC 9110 §10.2.3) until the window frees a request.
- :func:`check_text_limits` and :func:`check_row_count` raise 413 problems
  naming the limit and where it was broken (line number); the readings view
  keeps such a body as a rejected upload like any other refused body.
- The body size limit itself is Flask's ``MAX_CONTENT_LENGTH`` (413 before
  the body is read), set from ``OHMTALLY_MAX_UPLOAD_BYTES`` in ``create_app``.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from typing import Any

from flask import Flask, current_app, g, request

from api.errors import ApiError, problem_response
from api.intake.bodies import Item

__all__ = ["check_row_count", "check_text_limits", "init_app", "rate_key"]

_TEXT_TYPES = frozenset({"text/csv", "text/plain", "application/x-ndjson"})


def rate_key() -> str:
    key_id = g.get("api_key_id")
    if key_id is not None:
        return f"key:{key_id}"
    return f"addr:{request.remote_addr or 'unknown'}"


def init_app(app: Flask) -> None:
    from flask_limiter import Limiter
    from flask_limiter.errors import RateLimitExceeded

    settings = app.extensions["ohmtally.settings"]
    limiter = Limiter(rate_key, app=app, default_limits=[settings.rate_limit] if settings.rate_limit else [],
                      storage_uri=settings.rate_limit_storage, headers_enabled=False,
                      enabled=bool(settings.rate_limit))
    limiter.request_filter(lambda: request.path.rstrip("/") == "/v1/health")
    app.extensions["ohmtally.limiter"] = limiter

    @app.errorhandler(RateLimitExceeded)
    def _too_many(_error: RateLimitExceeded) -> Any:
        found = limiter.current_limit
        wait = 60
        if found is not None:  # seconds until the window frees a request, never past the window
            wait = max(1, min(math.ceil(found.reset_at - time.time()), found.limit.get_expiry()))
        return problem_response(ApiError(
            429, "rate_limited", f"too many requests; the limit is {settings.rate_limit} per API key",
            headers={"Retry-After": str(wait)}, extra={"retry_after_s": wait}))


def check_text_limits(body: bytes, media_type: str) -> None:
    """413 if a text body has a line longer than the limit or more lines than rows allowed."""
    if media_type not in _TEXT_TYPES:
        return
    settings = current_app.extensions["ohmtally.settings"]
    limit = settings.max_line_bytes
    start, number = 0, 0
    while start < len(body):
        end = body.find(b"\n", start)
        end = len(body) if end < 0 else end
        number += 1
        if end - start > limit:
            raise ApiError(413, "line_too_long", f"line {number} is {end - start} bytes; the most a line "
                           f"may hold is {limit} (OHMTALLY_MAX_LINE_BYTES)",
                           errors=[{"line": number, "code": "line_too_long",
                                    "reason": f"longer than {limit} bytes"}])
        if number > settings.max_rows + 1:  # + 1: a CSV header line is not a row
            raise ApiError(413, "too_many_rows", f"the body has more than {settings.max_rows} rows "
                           "(OHMTALLY_MAX_ROWS); split it into several posts",
                           errors=[{"line": number, "code": "too_many_rows",
                                    "reason": f"more than {settings.max_rows} rows"}])
        start = end + 1


def check_row_count(items: Sequence[Item]) -> None:
    """413 if a body carries more rows (JSON circuits, input lines) than allowed, naming the first extra."""
    limit = current_app.extensions["ohmtally.settings"].max_rows
    if len(items) <= limit:
        return
    where = items[limit].location  # "/circuits/5" or "line 7"
    entry: dict[str, Any] = ({"line": int(where.split()[1])} if where.startswith("line ") and
                             where.split()[1].isdigit() else {"pointer": where})
    raise ApiError(413, "too_many_rows", f"the body has {len(items)} rows; the most one body may carry "
                   f"is {limit} (OHMTALLY_MAX_ROWS); split it into several posts",
                   errors=[{**entry, "code": "too_many_rows", "reason": f"more than {limit} rows"}])
