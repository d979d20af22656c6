"""JSON logs for every ``ohmtally`` logger, and a request id carried in and out as ``X-Request-Id``.

Invariants:
- Every request gets an id: the client's ``X-Request-Id`` when it is a sane
  token (1–128 of ``A-Z a-z 0-9 . _ : -``), else a fresh UUID; the response
  carries it back and every log line written during the request names it.
- One logging configuration, :func:`configure_logging` (``logging.config.dictConfig``):
  the ``ohmtally`` logger holds the one handler (JSON lines on stderr) at
  ``OHMTALLY_LOG_LEVEL``, and every logger under it (``ohmtally.api``,
  ``ohmtally.webhooks``, ``ohmtally.capture`` …) propagates to it, so a module
  only asks ``logging.getLogger("ohmtally.<part>")`` and its lines appear.
  Loggers of other packages are left as they were (``disable_existing_loggers``
  off); the ``ohmtally`` tree does not propagate to the root, so a line is
  written once.
- Each line is one JSON object (python-json-logger): ``time`` (UTC, RFC 3339),
  ``level``, ``logger``, ``message``, ``request_id`` inside a request, and the
  ``extra`` fields the caller gave (a delivery id, a status …).
- One line per request (method, route, path, status, duration); bodies and query
  strings are not logged (they may hold site addresses).
"""

from __future__ import annotations

import logging
import logging.config
import re
import sys
import time
import uuid
from typing import Any

from flask import Flask, Response, g, has_request_context, request
from pythonjsonlogger.json import JsonFormatter as _LibraryJsonFormatter

__all__ = ["LOGGER_ROOT", "REQUEST_ID_HEADER", "JsonFormatter", "StderrHandler", "configure_logging",
           "gunicorn_logconfig", "init_app"]

REQUEST_ID_HEADER = "X-Request-Id"
LOGGER_ROOT = "ohmtally"
_SANE_ID = re.compile(r"^[A-Za-z0-9._:\-]{1,128}$")
_LOGGER_NAME = "ohmtally.api"
_RENAMED = {"asctime": "time", "levelname": "level", "name": "logger"}


class JsonFormatter(_LibraryJsonFormatter):
    """One JSON object per line; the request id is added inside a request."""

    converter = time.gmtime  # type: ignore[assignment]  # UTC on every host: lines sort together

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        kwargs.setdefault("fmt", ["asctime", "levelname", "name", "message"])
        kwargs.setdefault("datefmt", "%Y-%m-%dT%H:%M:%SZ")
        kwargs.setdefault("rename_fields", _RENAMED)
        kwargs.setdefault("json_ensure_ascii", False)
        super().__init__(*args, **kwargs)

    def add_fields(self, log_data: dict[str, Any], record: logging.LogRecord,
                   message_dict: dict[str, Any]) -> None:
        super().add_fields(log_data, record, message_dict)
        log_data["level"] = record.levelname.lower()
        if has_request_context() and "request_id" not in log_data:
            log_data["request_id"] = g.get("request_id")


class StderrHandler(logging.StreamHandler):  # type: ignore[type-arg]
    """Writes to whatever ``sys.stderr`` is when a line is written (gunicorn and test runners
    replace it), never to a stream kept from when logging was configured."""

    def __init__(self) -> None:
        super().__init__(sys.stderr)

    @property
    def stream(self) -> Any:
        return sys.stderr

    @stream.setter
    def stream(self, _value: Any) -> None:
        pass


def configure_logging(level: str) -> None:
    """Install the one configuration of the ``ohmtally`` loggers (idempotent: a second call
    replaces the handler, never adds one)."""
    logging.config.dictConfig({
        "version": 1,
        "disable_existing_loggers": False,
        "formatters": {"json": {"()": JsonFormatter}},
        "handlers": {"stderr": {"()": StderrHandler, "formatter": "json"}},
        "loggers": {
            LOGGER_ROOT: {"level": level, "handlers": ["stderr"], "propagate": False},
            # children carry no handler and no level of their own: they inherit both
            _LOGGER_NAME: {"level": "NOTSET", "propagate": True},
            "ohmtally.webhooks": {"level": "NOTSET", "propagate": True},
            "ohmtally.capture": {"level": "NOTSET", "propagate": True},
        },
    })


def gunicorn_logconfig(level: str) -> dict[str, Any]:
    """gunicorn's ``logconfig_dict``: its own lines (the arbiter's boots, exits, a worker's timeout)
    as the same JSON lines on stderr, so a log collector reads one format from ``ohmtally serve``.

    gunicorn merges this over its defaults key by key, so every key its defaults name is given:
    the root logger too (other packages' warnings, in JSON on stderr rather than text on stdout).
    """
    stderr = {"()": StderrHandler, "formatter": "json"}
    return {
        "version": 1,
        "disable_existing_loggers": False,
        "formatters": {"json": {"()": JsonFormatter}},
        "handlers": {"console": stderr, "error_console": stderr},
        "root": {"level": "WARNING", "handlers": ["console"]},
        "loggers": {
            "gunicorn.error": {"level": level, "handlers": ["error_console"], "propagate": False},
            # the app writes its own line per request (above): gunicorn's access log stays off
            "gunicorn.access": {"level": "WARNING", "handlers": ["console"], "propagate": False},
        },
    }


def init_app(app: Flask, level: str) -> None:
    configure_logging(level)
    logger = logging.getLogger(_LOGGER_NAME)
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
        rule = request.url_rule.rule if request.url_rule is not None else None
        logger.info("request", extra={
            "method": request.method, "route": rule, "path": request.path,
            "status": response.status_code, "remote_addr": request.remote_addr,
            "duration_ms": round((time.perf_counter() - started) * 1000, 2)})
        return response
