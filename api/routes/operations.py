"""``/v1/ready`` and ``/v1/metrics``: what a load balancer and Prometheus ask a server.

Invariants:
- ``GET /v1/ready`` needs no key (like ``/v1/health``): 200 when the database
  answers one query (its revision and the schema's floor) and this build can serve
  that schema (:meth:`api.db.schema.SchemaWindow.refusal`), else 503 with a problem
  whose ``code`` says which (``database_unavailable``, ``schema_behind``,
  ``schema_too_new`` …). ``/v1/health`` stays liveness only: it never touches the
  database, so a database outage takes a server out of rotation, never restarts it.
- ``GET /v1/metrics`` needs a key with the ``admin`` scope (no key with
  ``OHMTALLY_AUTH=off``, which ``serve`` allows on loopback only); it answers the
  Prometheus text format (:mod:`api.http.metrics`).
"""

from __future__ import annotations

import logging
from typing import Any

from flask import Response, current_app
from flask.views import MethodView
from flask_smorest import Blueprint
from sqlalchemy.exc import SQLAlchemyError

from api.db.schema import SchemaNotCurrent, SchemaState, read_state, schema_window, servable
from api.errors import PROBLEM_MEDIA_TYPE, ApiError
from api.http.auth import require_scope
from api.http.metrics import CONTENT_TYPE, exposition
from api.schemas.catalogue import ReadySchema
from api.schemas.errors import ProblemSchema
from engine import __version__

__all__ = ["blp"]

log = logging.getLogger("ohmtally.api")
blp = Blueprint("operations", __name__, url_prefix="/v1", description="Readiness and metrics")

_NOT_READY = ("not ready: the database did not answer (database_unavailable), or its schema is one this "
              "build cannot serve (schema_missing, schema_behind, schema_diverged, schema_too_new)")


@blp.route("/ready")
class Ready(MethodView):
    @blp.doc(security=[])  # no API key (api.http.auth.PUBLIC_PATHS)
    @blp.response(200, ReadySchema)
    @blp.alt_response(503, description=_NOT_READY, schema=ProblemSchema, content_type=PROBLEM_MEDIA_TYPE)
    def get(self) -> Any:
        """Readiness: the database answers and its schema is one this build can serve (no auth)."""
        state, refusal = _state()
        if refusal is not None:
            raise ApiError(503, refusal.code, f"the database {refusal}",
                           extra={"schema": {"revision": state.revision, "head": schema_window().head,
                                             "serves_from": state.serves_from}})
        return {"status": "ready", "version": __version__,
                "schema": {"revision": state.revision, "head": schema_window().head,
                           "serves_from": state.serves_from}}


def _state() -> tuple[SchemaState, SchemaNotCurrent | None]:
    engine = current_app.extensions["ohmtally.engine.read"]
    try:
        with engine.connect() as connection:
            return servable(connection)
    except SQLAlchemyError:
        pass  # a missing table (a schema from before the floor, or none) or no database: look closer
    try:
        with engine.connect() as connection:
            state = read_state(connection)
    except SQLAlchemyError as exc:  # the driver's message may name the host: only its class leaves
        log.warning("ready: the database did not answer", exc_info=exc)
        raise ApiError(503, "database_unavailable",
                       f"the database did not answer ({type(exc).__name__}); see the server log") from exc
    return state, schema_window().refusal(state)


@blp.route("/metrics")
class Metrics(MethodView):
    @require_scope("admin")
    @blp.doc(security=[{"apiKey": ["admin"]}])
    @blp.response(200, {"type": "string"}, content_type="text/plain",
                  description="Prometheus text exposition format 0.0.4")
    def get(self) -> Any:
        """Prometheus metrics: requests and latency by route, uploads, verdict outcomes, the webhook
        backlog (an admin key)."""
        body = exposition(current_app.extensions["ohmtally.engine.read"])
        return Response(body, status=200, content_type=CONTENT_TYPE)
