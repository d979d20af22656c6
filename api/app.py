"""The Flask app factory: settings, JSON logs, database, auth, the /v1 blueprints, one error handler.

Invariants:
- ``create_app(config)`` reads ``OHMTALLY_*`` settings (``config`` wins) and
  refuses to build an app on a database whose schema it cannot serve (``api.db.schema``).
- Every error, ours (:class:`ApiError`), Flask's/werkzeug's (404, 405, 413),
  webargs'/marshmallow's (422) or an unexpected exception (500, logged),
  leaves as ``application/problem+json`` from :meth:`OhmtallyApi.handle_http_exception`
  or :func:`_api_error`; no traceback reaches a client.
- Every request passes the middleware of :mod:`api.http` in one order: the request
  log (a request id on every answer), the client's address from trusted proxies,
  metrics and compression (their ``after_request`` steps run after every other's),
  the API key and its organisation
  (``OHMTALLY_AUTH=on`` fails closed), the rate limit, Idempotency-Key.
- Every JSON answer is encoded by one provider (:mod:`api.http.json_provider`).
"""

from __future__ import annotations

import http
from collections.abc import Mapping
from typing import Any

from flask import Flask, current_app
from flask_smorest import Api
from werkzeug.exceptions import HTTPException
from werkzeug.routing import IntegerConverter

from api.db import session as db
from api.db.models.jobs import MAX_JOB_ID
from api.errors import (
    PROBLEM_MEDIA_TYPE,
    ApiError,
    insufficient_storage,
    messages_to_errors,
    problem_response,
    storage_full,
)
from api.http import auth, compression, idempotency, limits, metrics, proxies, request_log
from api.http.json_provider import OrjsonProvider
from api.openapi import DocumentCompletion
from api.routes import BLUEPRINTS
from api.schemas import json_types_attribute
from api.schemas.errors import ProblemSchema
from api.settings import load_settings
from api.webhooks import sealing
from engine import __version__

__all__ = ["OhmtallyApi", "create_app", "default_instance_path"]


class OhmtallyApi(Api):  # type: ignore[misc]
    """flask-smorest's Api with problem+json errors, documented as such."""

    ERROR_SCHEMA = ProblemSchema

    def _register_responses(self) -> None:
        default: str = getattr(self, "DEFAULT_RESPONSE_CONTENT_TYPE")  # noqa: B009 (untyped base)
        self.DEFAULT_RESPONSE_CONTENT_TYPE = PROBLEM_MEDIA_TYPE
        try:
            super()._register_responses()
        finally:
            self.DEFAULT_RESPONSE_CONTENT_TYPE = default

    def handle_http_exception(self, error: HTTPException) -> Any:
        status = error.code or 500
        if status >= 500:
            original = getattr(error, "original_exception", None) or error
            if storage_full(original):  # a full disk is the truth to tell: 507, not a bug's 500
                current_app.extensions["ohmtally.logger"].error("storage full: %s", original)
                return problem_response(insufficient_storage(kept=False))
            current_app.extensions["ohmtally.logger"].error(
                "unhandled error", exc_info=(type(original), original, original.__traceback__))
            return problem_response(ApiError(500, "internal_error",
                                             "the server could not complete the request; the "
                                             "error was logged with this request id"))
        data = getattr(error, "data", None) or {}
        messages = data.get("messages") or data.get("errors")
        errors: list[dict[str, Any]] = []
        if isinstance(messages, Mapping):
            for location, inner in messages.items():
                for entry in messages_to_errors(inner):
                    if location in ("query", "path", "headers"):
                        entry["parameter"] = entry.pop("pointer").lstrip("/")
                    errors.append(entry)
        code = _HTTP_CODES.get(status, http.HTTPStatus(status).phrase.lower().replace(" ", "_"))
        detail = str(data.get("message") or error.description or http.HTTPStatus(status).phrase)
        if status == 422 and errors:
            detail = f"{len(errors)} invalid parameter(s)"
        problem = ApiError(status, code, detail, errors=errors, headers=dict(data.get("headers") or {}))
        response = problem_response(problem)
        if status == 405 and hasattr(error, "valid_methods") and error.valid_methods:
            response.headers["Allow"] = ", ".join(error.valid_methods)
        return response


_HTTP_CODES = {404: "not_found", 405: "method_not_allowed", 413: "body_too_large",
               400: "bad_request", 422: "invalid_parameters", 415: "unsupported_media_type"}


class DatabaseIdConverter(IntegerConverter):
    """``<int:…>`` in every route: ids are 32-bit INTEGER columns (PostgreSQL int4), so a
    larger number names nothing and is a 404 from routing, never an overflow in the driver (500)."""

    def __init__(self, map: Any, *args: Any, **kwargs: Any) -> None:
        kwargs.setdefault("max", 2**31 - 1)
        super().__init__(map, *args, **kwargs)


class JobIdConverter(IntegerConverter):
    """``<job:job_id>``: job ids are random in 1 … 2**53 − 1 in 64-bit columns (migration 0006);
    a larger number names nothing and is a 404 from routing, never an overflow in the driver."""

    def __init__(self, map: Any, *args: Any, **kwargs: Any) -> None:
        kwargs.setdefault("min", 1)
        kwargs.setdefault("max", MAX_JOB_ID)
        super().__init__(map, *args, **kwargs)


def _api_error(error: ApiError) -> Any:
    return problem_response(error)


def create_app(config: Mapping[str, Any] | None = None) -> Flask:
    settings = load_settings(config)
    app = Flask("api", instance_path=settings.instance_path, instance_relative_config=False)
    app.url_map.converters["int"] = DatabaseIdConverter
    app.url_map.converters["job"] = JobIdConverter
    app.config.update(
        API_TITLE="ohmtally",
        API_VERSION=__version__,
        OPENAPI_VERSION="3.1.0",
        OPENAPI_URL_PREFIX="/v1",
        OPENAPI_JSON_PATH="openapi.json",
        # one byte past the limit: a body cut there is known to be too large (api.http.limits)
        MAX_CONTENT_LENGTH=settings.max_upload_bytes + 1,
        API_SPEC_OPTIONS={"info": {"description": "Installation test readings in, verdicts out. "
                                   "Verdicts are a decision aid; the person who signs decides."}},
    )
    for key, value in (config or {}).items():
        if not str(key).startswith("OHMTALLY_") and str(key).isupper():
            app.config[key] = value
    app.json = OrjsonProvider(app)  # one encoder for every answer (api.http.json_provider)
    app.extensions["ohmtally.settings"] = settings
    request_log.init_app(app, settings.log_level)
    # Installed before every other step: the client's address from trusted proxies, then
    # the metrics' latency and compression, whose after_request run after all the others'.
    proxies.init_app(app, settings.trusted_proxies)
    metrics.init_app(app)
    compression.init_app(app)
    url = db.database_url_for(app.instance_path, settings.database_url)
    app.config["OHMTALLY_DATABASE_URL"] = url
    db.init_app(app, url)
    try:
        _finish(app)
    except BaseException:
        # a boot refused after the database was opened (a key file others may read, a bad
        # setting) leaves no connection behind: the caller never gets the app to close it
        db.close_engines(app)
        raise
    return app


def _finish(app: Flask) -> None:
    """Everything after the database: the server key check, middleware, the document, the routes."""
    # The webhook secrets' server key is checked now, so a bad key file stops the boot rather
    # than the first subscription; with keys on and no OHMTALLY_ENCRYPTION_KEY, webhooks refuse
    # to store secrets (api/webhooks/README.md) and the operator is told at start-up.
    if sealing.box_for_app(app) is None:
        app.extensions["ohmtally.logger"].warning(
            "OHMTALLY_ENCRYPTION_KEY is not set: webhook subscriptions are refused until it is")
    # Request middleware, in this order: the key check, then the rate limit (it counts per
    # key), then Idempotency-Key (a key's reservation belongs to an organisation).
    auth.init_app(app)
    limits.init_app(app)
    idempotency.init_app(app)

    # the document completed as each route is registered: ids, security, headers, constraints, examples
    api = OhmtallyApi(app, spec_kwargs={"extra_plugins": [DocumentCompletion(app)]})
    app.extensions["ohmtally.openapi"] = api
    api.ma_plugin.converter.add_attribute_function(json_types_attribute)
    app.register_error_handler(ApiError, _api_error)
    for blueprint in BLUEPRINTS:
        api.register_blueprint(blueprint)


def default_instance_path() -> str:
    """Flask's instance folder for this package (``instance/`` beside a checkout)."""
    return str(Flask("api").instance_path)
