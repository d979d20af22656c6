"""``Idempotency-Key`` on every job-changing POST, scoped per organisation; the first answer replayed.

Invariants:
- A POST under ``/v1/jobs`` with an ``Idempotency-Key`` reserves the key for
  the request's organisation (one row in ``idempotency_records``) in the same
  transaction as the change; the view fills in its response before it
  commits (:func:`commit_with`, :func:`remember_problem`). So the change and
  the answer are committed together or not at all: a retry after a crash
  either finds both or neither.
- Same key, same method, path, content type and body → the first response's
  status and bytes, with ``Idempotent-Replayed: true``; nothing changes.
  Same key, anything different → 409 ``idempotency_key_reused``.
- Two requests racing with one key: the second's reservation waits on the
  unique index (PostgreSQL) or on the write lock (SQLite ``BEGIN IMMEDIATE``)
  and then sees the first's committed answer.
- ``POST /v1/verify`` stores nothing and is the same function of its body
  every time, so a key there is accepted and has no effect.
- A request that fails before committing (404, 415, 422 on a bad JSON body)
  leaves no reservation: sending it again re-checks it.
"""

from __future__ import annotations

import hashlib
import re

from flask import Flask, Response, current_app, g, request
from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from api.db.models import IdempotencyRecord, utcnow
from api.errors import ApiError, problem_response

__all__ = ["IDEMPOTENCY_HEADER", "IDEMPOTENCY_PARAMETER_DOC", "KEY_PATTERN", "commit_with", "init_app",
           "remember_problem"]

IDEMPOTENCY_HEADER = "Idempotency-Key"
KEY_PATTERN = re.compile(r"^[\x21-\x7e]{1,200}$")  # visible ASCII, as a header value carries safely
REPLAYED_HEADER = "Idempotent-Replayed"
IDEMPOTENCY_PARAMETER_DOC = {
    "in": "header", "name": IDEMPOTENCY_HEADER, "required": False,
    "schema": {"type": "string", "minLength": 1, "maxLength": 200, "pattern": "^[!-~]{1,200}$"},
    "description": "resending the same request with the same key (per organisation) is answered "
                   "with the first response, changing nothing; the same key with another request is a 409"}


def _applies() -> bool:
    return request.method == "POST" and request.path.startswith("/v1/jobs")


def request_key() -> str | None:
    key = request.headers.get(IDEMPOTENCY_HEADER)
    if key is None:
        return None
    if not KEY_PATTERN.match(key):
        raise ApiError(400, "bad_idempotency_key",
                       "the Idempotency-Key must be 1–200 visible ASCII characters",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "bad_idempotency_key",
                                "reason": "1–200 visible ASCII characters"}])
    return key


def fingerprint() -> str:
    digest = hashlib.sha256()
    for part in (request.method, request.full_path.rstrip("?"), request.mimetype or ""):
        digest.update(part.encode("utf-8", "surrogateescape") + b"\n")
    digest.update(request.get_data(cache=True))
    return digest.hexdigest()


def _find(session: Session, organisation_id: int, key: str) -> IdempotencyRecord | None:
    query = select(IdempotencyRecord).where(IdempotencyRecord.organisation_id == organisation_id,
                                            IdempotencyRecord.idempotency_key == key)
    return session.scalars(query).first()


def _answer(found: IdempotencyRecord, wanted: str) -> Response:
    if found.request_sha256 != wanted:
        raise ApiError(409, "idempotency_key_reused",
                       "this Idempotency-Key was used with another request (method, path or body); "
                       "a key names one request: use a new key for a new body",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "idempotency_key_reused",
                                "reason": "a key names one request"}])
    if found.status_code is None or found.response_body is None:
        raise ApiError(409, "idempotency_key_in_doubt",
                       "a request with this Idempotency-Key was taken but its answer was not recorded; "
                       "read the job's uploads to see what it changed",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "idempotency_key_in_doubt",
                                "reason": "no recorded answer"}])
    response = current_app.response_class(found.response_body, status=found.status_code,
                                          content_type=found.content_type or "application/json")
    if found.location:
        response.headers["Location"] = found.location
    response.headers[REPLAYED_HEADER] = "true"
    return response


def _reserve() -> Response | None:
    from api.db import get_session
    from api.http.auth import current_organisation_id

    key = request_key()
    if key is None:
        return None
    organisation_id = current_organisation_id()
    assert organisation_id is not None  # inside a request: auth has resolved one or raised
    wanted = fingerprint()
    session = get_session()
    found = _find(session, organisation_id, key)
    if found is not None:
        return _answer(found, wanted)
    record = IdempotencyRecord(organisation_id=organisation_id, idempotency_key=key, method=request.method,
                               path=request.path[:2000], request_sha256=wanted, created_at=utcnow())
    session.add(record)
    try:
        session.flush()
    except IntegrityError:  # another request with this key committed first
        session.rollback()
        found = _find(session, organisation_id, key)
        if found is None:  # pragma: no cover - the winner's row is committed before we can fail
            raise
        return _answer(found, wanted)
    g.idempotency_record = record
    return None


def commit_with(session: Session, response: Response) -> Response:
    """Record ``response`` as the answer to this request's key (if any), then commit both."""
    record: IdempotencyRecord | None = g.pop("idempotency_record", None)
    if record is not None:
        record.status_code = response.status_code
        record.content_type = response.content_type
        record.location = response.headers.get("Location")
        record.response_body = response.get_data()
    session.commit()
    return response


def remember_problem(problem: ApiError) -> None:
    """Record a refusal that is committed anyway (a rejected upload kept) as the key's answer."""
    record: IdempotencyRecord | None = g.pop("idempotency_record", None)
    if record is not None:
        response = problem_response(problem)
        record.status_code = response.status_code
        record.content_type = response.content_type
        record.response_body = response.get_data()


def init_app(app: Flask) -> None:
    @app.before_request
    def _idempotency() -> Response | None:
        return _reserve() if _applies() else None
