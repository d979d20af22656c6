"""``POST /v1/jobs/<id>/readings`` and the job's uploads, kept exactly as received.

Invariants:
- The body is stored (bytes, sha256, size, content type, time) before it is
  read, in the same transaction as the merge; a body that cannot be taken
  at all is still stored, with status ``rejected`` and the reasons, and the
  problem response names its upload id. Nothing a client sent is lost.
- The job row is locked for the whole post (``repository.lock_job``), so
  concurrent posts to one job apply in turn.
- The verdicts returned are those of the circuits this upload touched,
  computed over all the job's records (board-level checks need the board).
- A post with an ``Idempotency-Key`` the organisation has seen is answered
  with the first response (``Idempotent-Replayed: true``, ``api.http.idempotency``),
  never merged or stored twice; the same key with a different body is a 409
  (as the issue asks; the IETF httpapi draft suggests 422). Uploads from before
  migration 0003 are still found by their per-job key here.
- Without a key, an exact re-post of the job's latest upload within
  ``OHMTALLY_DUPLICATE_WINDOW_S`` is answered 200 with ``duplicate_of`` and
  merges nothing (a logger's blind resend must not double the history).
- One transaction: the upload is archived and every accepted value merged,
  or (on any error or a killed process) nothing changes at all.
"""

from __future__ import annotations

import hashlib
import re
from typing import Any

from flask import Response, request
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE

from api.db import get_session
from api.db.models import Job, Upload
from api.db.repository import (
    find_recent_duplicate,
    find_upload_by_key,
    get_job,
    get_upload,
    job_records,
    list_uploads,
    lock_job,
    merge_items,
    store_upload,
    upload_circuit_keys,
)
from api.errors import ApiError
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC, commit_with, remember_problem
from api.http.limits import check_row_count, check_text_limits
from api.intake.bodies import Intake, read_body
from api.routes.common import READINGS_BODY_DOC, json_response, raw_body, resolve_ruleset, settings
from api.routes.verify import ReadingsQuerySchema, verdicts_response
from api.schemas.jobs import ReadingsResponseSchema, UploadListSchema
from api.webhooks.outbox import emit_readings, outcomes_before
from engine import NOTICE, verify

__all__ = ["blp"]

blp = Blueprint("readings", __name__, url_prefix="/v1", description="Readings into a job; raw uploads")


def upload_dict(upload: Upload) -> dict[str, Any]:
    return {"id": upload.id, "job_id": upload.job_id, "content_type": upload.content_type,
            "adapter": upload.adapter, "profile": upload.profile, "sha256": upload.sha256,
            "size": upload.size, "received_at": upload.received_at.isoformat(),
            "status": upload.status, "accepted": upload.accepted, "rejected": upload.rejected,
            "href": f"/v1/jobs/{upload.job_id}/uploads/{upload.id}"}


IDEMPOTENCY_HEADER = "Idempotency-Key"
_KEY = re.compile(r"^[\x21-\x7e]{1,200}$")  # visible ASCII, as a header value can carry safely
_KEY_DOC = IDEMPOTENCY_PARAMETER_DOC


def _idempotency_key() -> str | None:
    key = request.headers.get(IDEMPOTENCY_HEADER)
    if key is None:
        return None
    if not _KEY.match(key):
        raise ApiError(400, "bad_idempotency_key",
                       "the Idempotency-Key must be 1–200 visible ASCII characters",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "bad_idempotency_key",
                                "reason": "1–200 visible ASCII characters"}])
    return key


def _replay(job: Job, earlier: Upload, body: bytes, *, duplicate: bool = False) -> Response:
    session = get_session()
    ref = {"id": earlier.id, "sha256": earlier.sha256, "size": earlier.size}
    if hashlib.sha256(body).hexdigest() != earlier.sha256:
        raise ApiError(409, "idempotency_key_reused",
                       f"upload {earlier.id} of job {job.id} used this Idempotency-Key with another body",
                       errors=[{"parameter": IDEMPOTENCY_HEADER, "code": "idempotency_key_reused",
                                "reason": "a key names one body"}], extra={"upload": ref})
    if earlier.status != "merged":
        raise ApiError(422, "rejected_earlier", f"upload {earlier.id} with this key was refused: "
                       "nothing in it was taken", errors=earlier.rejected, extra={"upload": ref},
                       headers={"Idempotent-Replayed": "true"})
    touched = upload_circuit_keys(session, earlier)
    verdicts = verify(job_records(session, job), resolve_ruleset(job.ruleset), only=touched)
    out: dict[str, Any] = {"accepted": earlier.accepted, "rejected": earlier.rejected, "upload": ref,
                           "verdicts": [v.as_dict() for v in verdicts], "notice": NOTICE}
    if duplicate:
        return verdicts_response({**out, "duplicate_of": earlier.id})
    return verdicts_response(out, headers={"Idempotent-Replayed": "true"})


@blp.route("/jobs/<int:job_id>/readings")
class JobReadings(MethodView):
    @blp.arguments(ReadingsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(requestBody=READINGS_BODY_DOC, parameters=[_KEY_DOC])
    @blp.response(200, ReadingsResponseSchema)
    def post(self, job_id: int, **query: Any) -> Any:
        """Merge readings into the job (per circuit and field, later wins; history kept)."""
        body, media_type, charset = raw_body()
        key = _idempotency_key()
        # The body is read before the job is locked (the lock is the database's one writer
        # lock on SQLite); a body that cannot be read is still stored, below, as rejected.
        intake: Intake | None = None
        unreadable: ApiError | None = None
        try:
            check_text_limits(body, media_type)
            intake = read_body(body, media_type, charset=charset, adapter=query.get("adapter"),
                               profile=query.get("profile"), profile_dir=settings().profile_dir)
        except ApiError as problem:
            unreadable = problem
        session = get_session()
        job = lock_job(session, job_id)
        if key is not None:
            earlier = find_upload_by_key(session, job, key)
            if earlier is not None:
                return _replay(job, earlier, body)
        content_type = _full_content_type(media_type, charset)
        if key is None:
            same = find_recent_duplicate(session, job, sha256=hashlib.sha256(body).hexdigest(),
                                         content_type=content_type, window_s=settings().duplicate_window_s)
            if same is not None:
                return _replay(job, same, body, duplicate=True)
        upload = store_upload(session, job, body=body, content_type=content_type,
                              adapter=intake.adapter if intake is not None else query.get("adapter"),
                              profile=query.get("profile"),
                              idempotency_key=key)
        try:
            if unreadable is not None:
                raise unreadable
            assert intake is not None
            if intake.ruleset and intake.ruleset != job.ruleset:
                raise ApiError(422, "ruleset_mismatch",
                               f"job {job.id} is verified under {job.ruleset!r}; the body names "
                               f"{intake.ruleset!r} (change the job, or leave ruleset out)",
                               errors=[{"pointer": "/ruleset", "code": "ruleset_mismatch",
                                        "reason": f"the job's ruleset is {job.ruleset!r}"}])
            check_row_count(intake.items)
        except ApiError as problem:
            upload.rejected = problem.errors
            problem.extra["upload"] = {"id": upload.id, "sha256": upload.sha256, "size": upload.size}
            remember_problem(problem)
            session.commit()  # the body is kept even though nothing in it was taken
            raise
        ruleset = resolve_ruleset(job.ruleset)
        before = outcomes_before(session, job, ruleset)  # verdict.changed compares with these
        accepted, touched = merge_items(session, job, upload, intake.items)
        upload.status, upload.accepted, upload.rejected = "merged", accepted, intake.rejected
        wanted = set(touched)
        # Every circuit sees the whole job (board-level checks), but only the touched ones are
        # verified unless verdict.changed needs all outcomes (a logger's post touches a few).
        all_verdicts = verify(job_records(session, job), ruleset, only=None if before is not None else wanted)
        emit_readings(session, job, upload, touched=touched, before=before, after=all_verdicts)
        # the webhook events commit with the merge, or neither does
        verdicts = [v for v in all_verdicts if v.key in wanted]
        return commit_with(session, verdicts_response({  # the answer is committed with the merge
            "accepted": accepted, "rejected": intake.rejected,
            "upload": {"id": upload.id, "sha256": upload.sha256, "size": upload.size},
            "verdicts": [v.as_dict() for v in verdicts], "notice": NOTICE}))


def _full_content_type(media_type: str, charset: str | None) -> str:
    if not media_type:
        return "application/octet-stream"
    return f"{media_type}; charset={charset}" if charset else media_type


@blp.route("/jobs/<int:job_id>/uploads")
class JobUploads(MethodView):
    @blp.response(200, UploadListSchema)
    def get(self, job_id: int) -> Any:
        """Every body posted to the job, oldest first, with what was taken and rejected."""
        session = get_session()
        job = get_job(session, job_id)
        uploads = [upload_dict(u) for u in list_uploads(session, job)]
        return json_response({"job_id": job.id, "uploads": uploads})


@blp.route("/jobs/<int:job_id>/uploads/<int:upload_id>")
class JobUpload(MethodView):
    @blp.response(200, {"type": "string", "format": "binary"}, content_type="*/*",
                  description="the body exactly as received, with its content type")
    def get(self, job_id: int, upload_id: int) -> Any:
        """The raw bytes of one upload, as received."""
        session = get_session()
        upload = get_upload(session, get_job(session, job_id), upload_id)
        response = Response(upload.body, status=200, content_type=upload.content_type)
        response.headers["ETag"] = f'"{upload.sha256}"'
        response.headers["Content-Disposition"] = f'attachment; filename="upload-{upload.id}"'
        return response
