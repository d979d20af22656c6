"""Prometheus metrics (prometheus-client): requests, latency, uploads, verdicts, the webhook backlog.

Invariants:
- Requests and latency are labelled by the URL rule (``/v1/jobs/<job:job_id>/readings``),
  never the raw path, so ids never become label values; a path no rule matches is
  ``<unmatched>``. Latency runs from the first ``before_request`` to the last
  ``after_request`` step but the log line: the view, the commit and compression.
- ``ohmtally_uploads_total{status}`` counts readings uploads when their transaction
  *commits* (merged, or refused and kept as rejected); a rolled-back post, a replay
  or a ``duplicate_of`` answer adds nothing (SQLAlchemy session events).
- ``ohmtally_verdicts_total{route,outcome}`` counts the verdicts in JSON answers
  (the data a view returned, as flask-smorest kept it for the answer), so a job's
  verdicts read twice count twice; rendered formats (CSV, JUnit, HTML) are not counted.
- The webhook backlog and the database's health are read from the database when
  Prometheus scrapes (:class:`DatabaseCollector`, one query), never kept in a process.
- Several gunicorn workers: ``ohmtally serve`` sets ``PROMETHEUS_MULTIPROC_DIR``
  (:mod:`api.ops.multiprocess`) before prometheus-client is imported, each worker
  writes its counts to files there, and a scrape of any worker sums every worker's,
  so counters never jump back when another worker answers. Without the variable
  (tests, one process) counts live in this process. :func:`init_app` refuses the
  variable set *after* the import (counts would silently stay at zero).
"""

from __future__ import annotations

import logging
import os
import time
from collections.abc import Iterator
from datetime import UTC, datetime
from typing import Any

from flask import Flask, Response, g, request
from prometheus_client import CollectorRegistry, Counter, Histogram, generate_latest, values
from prometheus_client.core import GaugeMetricFamily, Metric
from prometheus_client.multiprocess import MultiProcessCollector
from prometheus_client.registry import Collector
from sqlalchemy import Engine, func, select
from sqlalchemy import event as orm_event
from sqlalchemy import inspect as orm_inspect
from sqlalchemy.exc import SQLAlchemyError
from sqlalchemy.orm import Session

from api.db.models import Upload, WebhookDelivery, utcnow
from api.db.schema import schema_window
from engine import __version__

__all__ = ["CONTENT_TYPE", "REGISTRY", "DatabaseCollector", "exposition", "init_app"]

CONTENT_TYPE = "text/plain; version=0.0.4; charset=utf-8"  # the text format every Prometheus reads
MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"
UNMATCHED = "<unmatched>"
log = logging.getLogger("ohmtally.api")

REGISTRY = CollectorRegistry(auto_describe=True)
REQUESTS = Counter("ohmtally_http_requests", "HTTP requests answered, by method, route (URL rule) "
                   "and status", ["method", "route", "status"], registry=REGISTRY)
LATENCY = Histogram("ohmtally_http_request_duration_seconds", "time to answer a request (view, "
                    "commit, compression), by method and route", ["method", "route"], registry=REGISTRY,
                    buckets=(0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0, 30.0, 60.0))
UPLOADS = Counter("ohmtally_uploads", "readings uploads committed, by status (merged, rejected)",
                  ["status"], registry=REGISTRY)
VERDICTS = Counter("ohmtally_verdicts", "verdicts in JSON answers, by route and outcome",
                   ["route", "outcome"], registry=REGISTRY)

_UPLOADS_SEEN = "ohmtally.metrics.uploads"  # session.info: uploads added in this transaction
_listening = False  # the session events are installed once per process


def _route() -> str:
    return request.url_rule.rule if request.url_rule is not None else UNMATCHED


def _count_verdicts(route: str) -> None:
    # flask-smorest keeps the data a view returned (after its schema dumped it) in
    # g._flask_smorest["result_dump"]; reading it costs nothing more than the answer did.
    dumped = (g.get("_flask_smorest") or {}).get("result_dump")
    verdicts = dumped.get("verdicts") if isinstance(dumped, dict) else None
    if not isinstance(verdicts, list):
        return
    counts: dict[str, int] = {}
    for verdict in verdicts:
        outcome = verdict.get("outcome") if isinstance(verdict, dict) else None
        if isinstance(outcome, str):
            counts[outcome] = counts.get(outcome, 0) + 1
    for outcome, count in counts.items():
        VERDICTS.labels(route, outcome).inc(count)


def _observe(response: Response) -> Response:
    route = _route()
    started = g.get("request_started") or g.get("metrics_started") or time.perf_counter()
    REQUESTS.labels(request.method, route, str(response.status_code)).inc()
    LATENCY.labels(request.method, route).observe(time.perf_counter() - started)
    if response.status_code == 200:
        _count_verdicts(route)
    return response


def _start() -> None:
    if "request_started" not in g:
        g.metrics_started = time.perf_counter()


def _remember_uploads(session: Session, _context: Any) -> None:
    added = [obj for obj in session.new if isinstance(obj, Upload)]
    if added:
        session.info.setdefault(_UPLOADS_SEEN, []).extend(added)


def _count_uploads(session: Session) -> None:
    for upload in session.info.pop(_UPLOADS_SEEN, []):
        status = orm_inspect(upload).dict.get("status")  # the loaded value: no query after a commit
        if isinstance(status, str):
            UPLOADS.labels(status).inc()


def _forget_uploads(session: Session, *_args: Any) -> None:
    session.info.pop(_UPLOADS_SEEN, None)


def _listen_once() -> None:
    global _listening
    if _listening:
        return
    orm_event.listen(Session, "after_flush", _remember_uploads)
    orm_event.listen(Session, "after_commit", _count_uploads)
    orm_event.listen(Session, "after_rollback", _forget_uploads)
    _listening = True


class DatabaseCollector(Collector):
    """Gauges read when Prometheus scrapes: the webhook backlog and whether the database answers."""

    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    def collect(self) -> Iterator[Metric]:
        info = GaugeMetricFamily("ohmtally_build_info", "this build: package version and the newest "
                                 "schema revision it carries", labels=["version", "code_revision"])
        info.add_metric([__version__, schema_window().head], 1.0)
        yield info
        up = GaugeMetricFamily("ohmtally_database_up", "1 when the database answered this scrape")
        query = (select(WebhookDelivery.status, func.count(), func.min(WebhookDelivery.created_at))
                 .where(WebhookDelivery.status.in_(("pending", "failed")))
                 .group_by(WebhookDelivery.status))
        try:
            with self.engine.connect() as connection:
                rows = {status: (count, oldest) for status, count, oldest in connection.execute(query)}
        except SQLAlchemyError as exc:
            log.warning("metrics: the database did not answer", extra={"error": type(exc).__name__})
            up.add_metric([], 0.0)
            yield up
            return
        up.add_metric([], 1.0)
        yield up
        pending, oldest = rows.get("pending", (0, None))
        yield GaugeMetricFamily("ohmtally_webhook_deliveries_pending", "webhook deliveries not yet "
                                "delivered and still to be tried (the backlog)", value=float(pending))
        age = 0.0 if oldest is None else max(0.0, (utcnow() - _aware(oldest)).total_seconds())
        yield GaugeMetricFamily("ohmtally_webhook_oldest_pending_seconds", "age of the oldest pending "
                                "delivery (0 when none is pending)", value=age)
        yield GaugeMetricFamily("ohmtally_webhook_deliveries_failed", "webhook deliveries that ran out "
                                "of attempts", value=float(rows.get("failed", (0, None))[0]))


def _aware(moment: datetime) -> datetime:
    return moment if moment.tzinfo is not None else moment.replace(tzinfo=UTC)  # stored as UTC


def exposition(engine: Engine) -> bytes:
    """The text a scrape answers: every worker's counts (or this process's) and the database's gauges."""
    if os.environ.get(MULTIPROC_ENV):
        shared = CollectorRegistry()
        MultiProcessCollector(shared)  # type: ignore[no-untyped-call]
        counts = generate_latest(shared)
    else:
        counts = generate_latest(REGISTRY)
    database = CollectorRegistry(auto_describe=False)
    database.register(DatabaseCollector(engine))
    return counts + generate_latest(database)


def init_app(app: Flask) -> None:
    """Install the request hooks; call it early, so its latency covers the later steps."""
    if os.environ.get(MULTIPROC_ENV) and not getattr(values.ValueClass, "_multiprocess", False):
        raise RuntimeError(f"{MULTIPROC_ENV} was set after prometheus_client was imported: each worker "
                           "would count alone and the scrape would read nothing; set it before start")
    _listen_once()
    app.before_request(_start)
    app.after_request(_observe)
