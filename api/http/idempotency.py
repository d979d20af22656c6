"""What a repeated request gets, decided in one place: the first answer replayed, a 409, or
"duplicate of" an upload moments ago.

Invariants:
- A state-changing request (POST, PUT, PATCH, DELETE) under ``/v1/jobs`` with an
  ``Idempotency-Key`` is looked up before its view (with a reader's session: no writer
  lock is taken, so its body is parsed before any lock). After the view has answered,
  :func:`_record_answer` stores the key with that answer (one row in
  ``idempotency_records``, unique per organisation and key) in the request's own
  transaction, and the request's unit of work (``api.db.session``) commits change and
  answer together, or neither: a retry after a crash finds both or neither.
- Same key, same method, path, content type and body → the first response's status
  and bytes, with ``Ohmtally-Replay: <when the first answer was given>``; nothing
  changes. Same key, anything different → 409 ``idempotency_key_reused``. A key
  whose answer was never recorded → 409 ``idempotency_key_in_doubt``.
- Two requests racing with one key: a view that locks its job asks again once it holds the
  lock (:func:`answered_meanwhile`), so the second replays the first's answer without
  doing the work; elsewhere the second's insert meets the unique index, its work is
  rolled back and the first answer is replayed in its place.
- A request that fails without committing (404, 415, 422 on a bad JSON body) records
  nothing: sending it again re-checks it. (Rows from before this design may hold no
  answer: such a key is refused as in doubt.) A refusal that is committed anyway
  (a readings body kept as a rejected upload, ``g.commit_on_error``) is the key's answer.
- ``POST /v1/verify`` stores nothing and is the same function of its body every
  time, so a key there is accepted and has no effect.
- Without a key, an exact re-post of a job's latest upload within
  ``OHMTALLY_DUPLICATE_WINDOW_S`` is a blind resend (:func:`recent_duplicate`): the
  readings view answers it as ``duplicate_of`` that upload and merges nothing.
"""

from __future__ import annotations

import hashlib
import re
from datetime import timedelta

from flask import Flask, Response, current_app, g, request
from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from api.db.models import IdempotencyRecord, Job, Upload, utcnow
from api.db.session import get_session, read_session
from api.errors import ApiError, problem_response
from api.http.auth import tenant

__all__ = [
    "IDEMPOTENCY_HEADER",
    "IDEMPOTENCY_PARAMETER_DOC",
    "KEY_PATTERN",
    "REPLAY_HEADER",
    "answered_meanwhile",
    "init_app",
    "recent_duplicate",
    "request_key",
]

IDEMPOTENCY_HEADER = "Idempotency-Key"
KEY_PATTERN = re.compile(r"^[\x21-\x7e]{1,200}$")  # visible ASCII, as a header value carries safely
REPLAY_HEADER = "Ohmtally-Replay"  # on a replayed answer: when the first answer was given (RFC 3339)
IDEMPOTENCY_PARAMETER_DOC = {
    "in": "header", "name": IDEMPOTENCY_HEADER, "required": False,
    "schema": {"type": "string", "minLength": 1, "maxLength": 200, "pattern": "^[!-~]{1,200}$"},
    "description": "resending the same request with the same key (per organisation) is answered "
                   f"with the first response (marked `{REPLAY_HEADER}`), changing nothing; the same "
                   "key with another request is a 409"}
_CHANGING = frozenset({"POST", "PUT", "PATCH", "DELETE"})


def _applies() -> bool:
    # A request routing refuses (no such path, a method the path does not take) changes nothing:
    # its 404 or 405 (with Allow, RFC 9110 §15.5.6) is the answer, whatever key it carries.
    return (request.method in _CHANGING and request.path.startswith("/v1/jobs")
            and request.routing_exception is None)


def request_key() -> str | None:
    """The request's Idempotency-Key, or ``None``; a malformed one is a 400."""
    key = request.headers.get(IDEMPOTENCY_HEADER)
    if key is None:
        return None
    if not KEY_PATTERN.match(key):
        raise ApiError(400, "bad_idempotency_key",
                       "the Idempotency-Key must be 1–200 visible ASCII characters",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "bad_idempotency_key",
                                "reason": "1–200 visible ASCII characters"}])
    return key


def _fingerprint() -> str:
    digest = hashlib.sha256()
    for part in (request.method, request.full_path.rstrip("?"), request.mimetype or ""):
        digest.update(part.encode("utf-8", "surrogateescape") + b"\n")
    digest.update(request.get_data(cache=True))
    return digest.hexdigest()


def _find(session: Session, organisation_id: int, key: str) -> IdempotencyRecord | None:
    query = select(IdempotencyRecord).where(IdempotencyRecord.organisation_id == organisation_id,
                                            IdempotencyRecord.idempotency_key == key)
    return session.scalars(query).first()


def _replay(found: IdempotencyRecord, wanted: str) -> Response:
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
    response.headers[REPLAY_HEADER] = found.created_at.isoformat().replace("+00:00", "Z")
    return response


def _look_up() -> Response | None:
    """Before the view: a key already answered is replayed (or a 409); a new key is noted.

    The look-up reads with a reader's session: the request takes no writer lock for it, so a
    body is parsed before any lock is held (on SQLite the writer lock is the whole database's).
    """
    if not _applies():
        return None
    key = request_key()
    if key is None:
        return None
    organisation_id = tenant()
    wanted = _fingerprint()
    with read_session() as reader:
        found = _find(reader, organisation_id, key)
        if found is not None:
            return _replay(found, wanted)
    g.idempotency_key = (organisation_id, key, wanted)
    return None


def answered_meanwhile(session: Session) -> Response | None:
    """For a view that has just locked its job: the answer a request with the same key committed
    while this one waited for the lock (replayed, or a 409), else ``None``."""
    pending = g.get("idempotency_key")
    if pending is None:
        return None
    organisation_id, key, wanted = pending
    found = _find(session, organisation_id, key)
    if found is None:
        return None
    g.pop("idempotency_key", None)
    return _replay(found, wanted)


def _record_answer(response: Response) -> Response:
    """Store the key with the answer in the request's transaction; the unit of work commits both.

    A request with the same key that committed first wins: this one's insert meets the unique
    key, its work is rolled back, and the first answer is replayed in its place.
    """
    pending = g.pop("idempotency_key", None)
    if pending is None:
        return response
    if response.status_code >= 400 and not g.get("commit_on_error"):
        return response  # rolled back with everything else: nothing records the key
    organisation_id, key, wanted = pending
    session = get_session()
    session.add(IdempotencyRecord(
        organisation_id=organisation_id, idempotency_key=key, method=request.method,
        path=request.path[:2000], request_sha256=wanted, created_at=utcnow(),
        status_code=response.status_code, content_type=response.content_type,
        location=response.headers.get("Location"), response_body=response.get_data()))
    try:
        session.flush()
    except IntegrityError:  # the same key committed first by another request: its answer stands
        session.rollback()
        found = _find(session, organisation_id, key)
        if found is None:  # pragma: no cover - the winner's row is committed before we can fail
            raise
        g.pop("commit_on_error", None)  # nothing of this request is kept
        try:
            return _replay(found, wanted)
        except ApiError as refused:
            return problem_response(refused)
    return response


def recent_duplicate(session: Session, job: Job, *, sha256: str, content_type: str,
                     window_s: int) -> Upload | None:
    """The job's latest upload if it is this very body, merged, within ``window_s`` seconds.

    Only the *latest*: re-sending an older body after another upload is a deliberate
    correction (later wins) and must merge again. The caller holds the job's lock.
    """
    latest = session.scalars(select(Upload).where(Upload.job_id == job.id)
                             .order_by(Upload.id.desc()).limit(1)).first()
    if (latest is None or latest.sha256 != sha256 or latest.status != "merged"
            or latest.content_type != content_type
            or utcnow() - latest.received_at > timedelta(seconds=window_s)):
        return None
    return latest


def init_app(app: Flask) -> None:
    app.before_request(_look_up)
    app.after_request(_record_answer)
