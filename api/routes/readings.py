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
"""

from __future__ import annotations

from typing import Any

from flask import Response
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE

from engine import NOTICE, verify

from ..body_intake import read_body
from ..db import get_session
from ..errors import ApiError
from ..models import Upload
from ..repository import get_job, get_upload, job_records, list_uploads, lock_job, merge_items, store_upload
from ..schemas.jobs import ReadingsResponseSchema, UploadListSchema
from .common import READINGS_BODY_DOC, json_response, raw_body, resolve_ruleset, settings
from .verify import ReadingsQuerySchema

__all__ = ["blp"]

blp = Blueprint("readings", __name__, url_prefix="/v1", description="Readings into a job; raw uploads")


def upload_dict(upload: Upload) -> dict[str, Any]:
    return {"id": upload.id, "job_id": upload.job_id, "content_type": upload.content_type,
            "adapter": upload.adapter, "profile": upload.profile, "sha256": upload.sha256,
            "size": upload.size, "received_at": upload.received_at.isoformat(),
            "status": upload.status, "accepted": upload.accepted, "rejected": upload.rejected,
            "href": f"/v1/jobs/{upload.job_id}/uploads/{upload.id}"}


@blp.route("/jobs/<int:job_id>/readings")
class JobReadings(MethodView):
    @blp.arguments(ReadingsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(requestBody=READINGS_BODY_DOC)
    @blp.response(200, ReadingsResponseSchema)
    def post(self, job_id: int, **query: Any) -> Any:
        """Merge readings into the job (per circuit and field, later wins; history kept)."""
        body, media_type, charset = raw_body()
        session = get_session()
        job = lock_job(session, job_id)
        upload = store_upload(session, job, body=body,
                              content_type=_full_content_type(media_type, charset),
                              adapter=query.get("adapter"), profile=query.get("profile"))
        try:
            intake = read_body(body, media_type, charset=charset, adapter=query.get("adapter"),
                               profile=query.get("profile"), profile_dir=settings().profile_dir)
            if intake.ruleset and intake.ruleset != job.ruleset:
                raise ApiError(422, "ruleset_mismatch",
                               f"job {job.id} is verified under {job.ruleset!r}; the body names "
                               f"{intake.ruleset!r} (change the job, or leave ruleset out)",
                               errors=[{"pointer": "/ruleset", "code": "ruleset_mismatch",
                                        "reason": f"the job's ruleset is {job.ruleset!r}"}])
        except ApiError as problem:
            upload.rejected = problem.errors
            session.commit()  # the body is kept even though nothing in it was taken
            problem.extra["upload"] = {"id": upload.id, "sha256": upload.sha256, "size": upload.size}
            raise
        upload.adapter = intake.adapter
        accepted, touched = merge_items(session, job, upload, intake.items)
        upload.status, upload.accepted, upload.rejected = "merged", accepted, intake.rejected
        records = job_records(session, job)
        session.commit()
        wanted = set(touched)
        verdicts = [v for v in verify(records, resolve_ruleset(job.ruleset)) if v.key in wanted]
        return json_response({
            "accepted": accepted, "rejected": intake.rejected,
            "upload": {"id": upload.id, "sha256": upload.sha256, "size": upload.size},
            "verdicts": [v.as_dict() for v in verdicts], "notice": NOTICE})


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
