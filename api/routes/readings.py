"""``POST /v1/jobs/<id>/readings`` and the job's uploads, kept exactly as received.

Invariants:
- The body is stored (bytes, sha256, size, content type, time) in the same
  transaction as the merge; a body that cannot be taken at all is still stored,
  with status ``rejected`` and the reasons (``g.commit_on_error``), and the
  problem names its upload id. Nothing a client sent is lost.
- The job row is locked for the whole post (``repository.lock_job``), so
  concurrent posts to one job apply in turn. The body is parsed before the lock.
- The verdicts returned are those of the circuits this upload touched,
  computed over all the job's records (board-level checks need the board).
- Repeats are decided by :mod:`api.http.idempotency`: a keyed resend is the first
  answer replayed; a key-less exact re-post of the job's latest upload within
  ``OHMTALLY_DUPLICATE_WINDOW_S`` is answered with ``duplicate_of`` and merges
  nothing (a logger's blind resend must not double the history).
- One transaction: the upload is archived and every accepted value merged,
  or (on any error or a killed process) nothing changes at all.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from typing import Any

from flask import Response, g
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session

from api.answers import ReadingsAnswer
from api.db.context import context_rows
from api.db.models import Job, Upload
from api.db.repository import (
    get_job,
    get_upload,
    job_rows,
    list_uploads,
    lock_job,
    merge_items,
    records_of_rows,
    store_upload,
    upload_circuit_keys,
)
from api.db.session import get_session
from api.db.site_facts import merge_facts, site_of_rows, site_rows
from api.db.visits import previous_visit
from api.errors import ApiError, insufficient_storage, storage_full
from api.http.auth import tenant
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC, answered_meanwhile, recent_duplicate, request_key
from api.http.limits import body_limits
from api.intake.bodies import Intake, read_body, site_of_facts
from api.routes.common import READINGS_BODY_DOC, chosen_ruleset_id, raw_body, resolve_ruleset, settings
from api.routes.verify import DECIMALS, ReadingsQuerySchema
from api.schemas.jobs import ReadingsResponseSchema, UploadListSchema
from api.webhooks.outbox import emit_readings, outcomes_before, subscribed
from engine import CircuitRecord, Site, verify

__all__ = ["blp"]

blp = Blueprint("readings", __name__, url_prefix="/v1", description="Readings into a job; raw uploads")


def _duplicate(session: Session, job: Job, earlier: Upload, site: Site) -> ReadingsAnswer:
    """The answer to a blind resend: the earlier upload's, recomputed on the job as it stands."""
    touched = upload_circuit_keys(session, earlier)
    stored = context_rows(session, job.id, {board for board, _circuit in touched}, site)
    previous = previous_visit(session, job, {board for board, _circuit in touched})  # api/db/visits.py
    verdicts = verify(records_of_rows(stored), resolve_ruleset(job.ruleset), only=touched, site=site,
                      previous=previous)
    return ReadingsAnswer(accepted=earlier.accepted, rejected=earlier.rejected,
                          warnings=earlier.warnings or [], upload=earlier, verdicts=verdicts,
                          duplicate_of=earlier.id)


def _refuse(upload: Upload, problem: ApiError) -> ApiError:
    """Keep the refused body as a rejected upload (committed anyway) and name it in the problem."""
    upload.rejected = problem.errors
    problem.extra["upload"] = {"id": upload.id, "sha256": upload.sha256, "size": upload.size}
    g.commit_on_error = True
    return problem


@blp.route("/jobs/<job:job_id>/readings")
class JobReadings(MethodView):
    @blp.arguments(ReadingsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(requestBody=READINGS_BODY_DOC, parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(200, ReadingsResponseSchema)
    def post(self, job_id: int, **query: Any) -> Any:
        """Merge readings into the job (per circuit and field, later wins; history kept)."""
        if query.get("ruleset"):  # an unknown name is a 404 before anything is read or stored
            resolve_ruleset(query["ruleset"])
        body, media_type, charset = raw_body()
        key = request_key()
        # The body is read before the job is locked (the lock is the database's one writer
        # lock on SQLite); a body that cannot be read is still stored, below, as rejected.
        intake: Intake | None = None
        unreadable: ApiError | None = None
        try:
            intake = read_body(body, media_type, charset=charset, adapter=query.get("adapter"),
                               decimal_comma=DECIMALS.get(query.get("decimal") or ""),
                               profile=query.get("profile"), profile_dir=settings().profile_dir,
                               limits=body_limits())
        except ApiError as problem:
            unreadable = problem
        session = get_session()
        job = lock_job(session, tenant(), job_id)
        replayed = answered_meanwhile(session)  # the same key, committed while this one waited
        if replayed is not None:
            return replayed
        site_before = site_of_rows(site_rows(session, job))
        content_type = _full_content_type(media_type, charset)
        if key is None:
            same = recent_duplicate(session, job, sha256=hashlib.sha256(body).hexdigest(),
                                    content_type=content_type, window_s=settings().duplicate_window_s)
            if same is not None:
                return _duplicate(session, job, same, site_before)
        # the adapter and profile as the client named them, cut to their columns' width (a refused
        # name is kept for the record; 300 characters of it must not fail the insert)
        named_adapter = (intake.adapter if intake is not None else query.get("adapter")) or ""
        upload = store_upload(session, job, body=body, content_type=content_type,
                              adapter=named_adapter[:100] or None,
                              profile=(query.get("profile") or "")[:200] or None, idempotency_key=key)
        if unreadable is not None:
            raise _refuse(upload, unreadable)
        assert intake is not None
        try:
            named, where = chosen_ruleset_id(query.get("ruleset"), intake.ruleset)
            if named and named != job.ruleset:
                raise ApiError(422, "ruleset_mismatch",
                               f"job {job.id} is verified under {job.ruleset!r}; the request names "
                               f"{named!r} (change the job, or leave ruleset out)",
                               errors=[{**where, "code": "ruleset_mismatch",
                                        "reason": f"the job's ruleset is {job.ruleset!r}"}])
        except ApiError as problem:
            raise _refuse(upload, problem) from None
        ruleset = resolve_ruleset(job.ruleset)
        # What this post's verdicts depend on: the boards it touches and their feeder chains, so a
        # post costs what it touches, not the job's size; every circuit only when verdict.changed
        # must compare every outcome (a circuit the post did not touch can change).
        listening = subscribed(session, job.organisation_id, "verdict.changed")
        boards = {item.board for item in intake.items} | {f.board for f in intake.facts if f.scope == "board"}
        stored = (job_rows(session, job.id) if listening
                  else context_rows(session, job.id, boards, site_before, site_of_facts(intake.facts)))
        previous = previous_visit(session, job, None if listening else boards)  # api/db/visits.py
        merging = session.begin_nested()  # a full disk while merging still keeps the stored body
        try:
            # verdict.changed compares with the outcomes before the merge (None: nobody listens)
            before = (outcomes_before(session, job, ruleset, records_of_rows(stored), site=site_before,
                                      previous=previous) if listening else None)
            merged = merge_items(session, job, upload, intake.items, stored)
            facts_taken, facts_touched = merge_facts(session, job, upload, intake.facts)
            site = site_of_rows(site_rows(session, job)) if facts_touched else site_before
            upload.status, upload.rejected = "merged", intake.rejected
            upload.accepted, upload.warnings = merged.accepted + facts_taken, intake.warnings
            wanted = set(merged.touched) | _on_boards(merged.records, facts_touched)
            # Every circuit sees the whole job (board-level checks), but only the touched ones (and
            # those on boards whose facts changed) are verified unless verdict.changed needs all
            # outcomes (a logger's post touches a few).
            all_verdicts = verify(merged.records, ruleset, only=None if before is not None else wanted,
                                  site=site, previous=previous)
            # the webhook events commit with the merge, or neither does
            emit_readings(session, job, upload, touched=merged.touched, before=before, after=all_verdicts)
            merging.commit()  # RELEASE: the merge's rows are flushed inside the savepoint
        except DBAPIError as exc:
            if not storage_full(exc):
                raise
            merging.rollback()  # the upload row, written before the savepoint, stays
            raise _refuse(upload, insufficient_storage(kept=True)) from None
        return ReadingsAnswer(accepted=upload.accepted, rejected=intake.rejected, warnings=intake.warnings,
                              upload=upload, verdicts=[v for v in all_verdicts if v.key in wanted],
                              facts=sorted(_named(t) for t in facts_touched))


def _on_boards(records: Sequence[CircuitRecord], touched: set[tuple[str, str]]) -> set[tuple[str, str]]:
    """The circuits whose board's facts this post changed (the installation's change reaches every
    circuit: their verdicts are for GET …/verdicts, not this answer; ``facts`` names the change)."""
    boards = {board for scope, board in touched if scope == "board"}
    return {r.key for r in records if r.board in boards} if boards else set()


def _named(touched: tuple[str, str]) -> str:
    scope, board = touched
    return "installation" if scope == "installation" else f"board {board}"


def _full_content_type(media_type: str, charset: str | None) -> str:
    if not media_type:
        return "application/octet-stream"
    full = f"{media_type}; charset={charset}" if charset else media_type
    return full[:200]  # the column's width; a longer header is junk, kept as far as it fits


@blp.route("/jobs/<job:job_id>/uploads")
class JobUploads(MethodView):
    @blp.response(200, UploadListSchema)
    def get(self, job_id: int) -> Any:
        """Every body posted to the job, oldest first, with what was taken and rejected."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        return {"job_id": job.id, "uploads": list_uploads(session, job)}


@blp.route("/jobs/<job:job_id>/uploads/<int:upload_id>")
class JobUpload(MethodView):
    @blp.response(200, {"type": "string", "format": "binary"}, content_type="*/*",
                  description="the body exactly as received, with its content type")
    def get(self, job_id: int, upload_id: int) -> Any:
        """The raw bytes of one upload, as received."""
        session = get_session()
        upload = get_upload(session, get_job(session, tenant(), job_id), upload_id)
        response = Response(upload.body, status=200, content_type=upload.content_type)
        response.headers["ETag"] = f'"{upload.sha256}"'
        response.headers["Content-Disposition"] = f'attachment; filename="upload-{upload.id}"'
        return response
