"""JSON request logging with a request id carried in and out as ``X-Request-Id``.

Invariants:
- Every request gets an id: the client's ``X-Request-Id`` when it is a sane
  token (1–128 of ``A-Z a-z 0-9 . _ : -``), else a fresh UUID; the response
  carries it back and every log line written during the request names it.
- One log line per request (method, path, status, duration); bodies and
  query strings are not logged (they may hold site addresses).
"""

from __future__ import annotations

import logging
import re
import sys
import time
import uuid
from typing import Any

from flask import Flask, Response, g, has_request_context, json, request

__all__ = ["REQUEST_ID_HEADER", "JsonFormatter", "init_app"]

REQUEST_ID_HEADER = "X-Request-Id"
_SANE_ID = re.compile(r"^[A-Za-z0-9._:\-]{1,128}$")
_LOGGER_NAME = "ohmtally.api"


class JsonFormatter(logging.Formatter):
    """One JSON object per line; the request id is added inside a request."""

    def format(self, record: logging.LogRecord) -> str:
        out: dict[str, Any] = {
            "time": self.formatTime(record, "%Y-%m-%dT%H:%M:%S"),
            "level": record.levelname.lower(),
            "logger": record.name,
            "message": record.getMessage(),
        }
        if has_request_context():
            out["request_id"] = g.get("request_id")
        for key in ("method", "path", "status", "duration_ms"):
            if hasattr(record, key):
                out[key] = getattr(record, key)
        if record.exc_info:
            out["exception"] = self.formatException(record.exc_info)
        return json.dumps(out)


def _configure_logger(level: str) -> logging.Logger:
    logger = logging.getLogger(_LOGGER_NAME)
    logger.setLevel(level)
    if not any(getattr(h, "_ohmtally", False) for h in logger.handlers):
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(JsonFormatter())
        handler._ohmtally = True  # type: ignore[attr-defined]
        logger.addHandler(handler)
        logger.propagate = False
    return logger


def init_app(app: Flask, level: str) -> None:
    logger = _configure_logger(level)
    app.extensions["ohmtally.logger"] = logger

    @app.before_request
    def _start() -> None:
        given = request.headers.get(REQUEST_ID_HEADER, "")
        g.request_id = given if _SANE_ID.match(given) else uuid.uuid4().hex
        g.request_started = time.perf_counter()

    @app.after_request
    def _finish(response: Response) -> Response:
        request_id = g.get("request_id") or uuid.uuid4().hex
        response.headers[REQUEST_ID_HEADER] = request_id
        started = g.get("request_started", time.perf_counter())
        logger.info("request", extra={
            "method": request.method, "path": request.path, "status": response.status_code,
            "duration_ms": round((time.perf_counter() - started) * 1000, 2)})
        return response
