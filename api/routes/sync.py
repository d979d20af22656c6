"""``PATCH /v1/jobs/<id>`` and ``PATCH /v1/jobs/<id>/circuits/<board>/<circuit>``: external references.

Invariants:
- A PATCH is a JSON merge patch (RFC 7396, ``application/merge-patch+json``
  or ``application/json``): only the members sent change; ``null`` clears
  ``external_ref``. An empty patch changes nothing and does not bump the revision.
- A change bumps the job's revision and ``updated_at`` (``api.http.conditional``), so
  ``?updated_since=`` and the verdicts' ETag see it.
- A circuit is named by its board and circuit references, percent-encoded
  in the path; a circuit the job has no record of is a 404 (external refs
  are attached to circuits readings have created).
"""

from __future__ import annotations

from typing import Any

from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import ValidationError
from sqlalchemy import select

from api.db import get_session
from api.db.models import Circuit
from api.db.repository import lock_job, records_of
from api.errors import ApiError
from api.http.conditional import bump_revision
from api.intake.bodies import JSON_MEDIA_TYPE, read_json_document, validation_problem
from api.routes.common import json_response, raw_body
from api.routes.jobs import circuit_dict, job_dict
from api.schemas.jobs import CircuitStateSchema, JobSchema
from api.schemas.sync import CircuitPatchSchema, JobPatchSchema

__all__ = ["blp"]

blp = Blueprint("sync", __name__, url_prefix="/v1", description="External references for sync")

MERGE_PATCH = "application/merge-patch+json"
_ACCEPTED = (JSON_MEDIA_TYPE, MERGE_PATCH)


def _patch_body(schema: Any) -> dict[str, Any]:
    body, media_type, _charset = raw_body()
    if media_type not in _ACCEPTED:
        raise ApiError(415, "unsupported_media_type", f"send {MERGE_PATCH} or {JSON_MEDIA_TYPE}",
                       errors=[{"parameter": "Content-Type", "code": "unsupported_media_type",
                                "reason": f"expected {MERGE_PATCH}"}], extra={"choices": list(_ACCEPTED)})
    try:
        loaded: dict[str, Any] = schema.load(read_json_document(body))
    except ValidationError as exc:
        raise validation_problem(exc) from None
    return loaded


def _doc(schema: Any) -> dict[str, Any]:
    return {"required": True, "content": {m: {"schema": schema} for m in _ACCEPTED}}


@blp.route("/jobs/<int:job_id>")
class JobPatch(MethodView):
    @blp.doc(requestBody=_doc(JobPatchSchema))
    @blp.response(200, JobSchema)
    def patch(self, job_id: int) -> Any:
        """Change a job's external_ref, reference or site (merge patch)."""
        data = _patch_body(JobPatchSchema())
        session = get_session()
        job = lock_job(session, job_id)
        changed = {k: v for k, v in data.items() if getattr(job, k) != v}
        for name, value in changed.items():
            setattr(job, name, value)
        if changed:
            bump_revision(job)
        session.commit()
        return json_response(job_dict(job))


@blp.route("/jobs/<int:job_id>/circuits/<board>/<circuit>")
class CircuitPatch(MethodView):
    @blp.doc(requestBody=_doc(CircuitPatchSchema))
    @blp.response(200, CircuitStateSchema)
    def patch(self, job_id: int, board: str, circuit: str) -> Any:
        """Set or clear a circuit's external_ref (the id of the circuit in the caller's system)."""
        data = _patch_body(CircuitPatchSchema())
        session = get_session()
        job = lock_job(session, job_id)
        row = session.scalars(select(Circuit).where(Circuit.job_id == job.id, Circuit.board == board,
                                                    Circuit.circuit == circuit)).first()
        if row is None:
            raise ApiError(404, "circuit_not_found", f"job {job.id} has no circuit {board}/{circuit}",
                           errors=[{"parameter": "circuit", "code": "circuit_not_found",
                                    "reason": "post readings for it first"}])
        if row.external_ref != data["external_ref"]:
            row.external_ref = data["external_ref"]
            bump_revision(job)
        session.commit()
        return json_response(circuit_dict(row, records_of([row])[0]))
