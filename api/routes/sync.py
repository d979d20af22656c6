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
from sqlalchemy import select

from api.answers import circuit_state
from api.db.models import Circuit
from api.db.repository import bump_revision, lock_job, records_of
from api.db.session import get_session
from api.db.visits import check_previous_job
from api.errors import ApiError
from api.http.auth import tenant
from api.intake.bodies import JSON_MEDIA_TYPE
from api.routes.common import json_body, json_body_doc
from api.schemas.jobs import CircuitStateSchema, JobSchema
from api.schemas.sync import CircuitPatchSchema, JobPatchSchema

__all__ = ["blp"]

blp = Blueprint("sync", __name__, url_prefix="/v1", description="External references for sync")

MERGE_PATCH = "application/merge-patch+json"
_ACCEPTED = (MERGE_PATCH, JSON_MEDIA_TYPE)


@blp.route("/jobs/<job:job_id>")
class JobPatch(MethodView):
    @blp.doc(requestBody=json_body_doc(JobPatchSchema, _ACCEPTED))
    @blp.response(200, JobSchema)
    def patch(self, job_id: int) -> Any:
        """Change a job's external_ref, reference, site, or its installation and previous visit
        (installation_ref, tested_on, previous_job_id, visit_map) (merge patch)."""
        data = json_body(JobPatchSchema(), media_types=_ACCEPTED)
        session = get_session()
        job = lock_job(session, tenant(), job_id)
        if "previous_job_id" in data:  # the previous visit: another job of the same organisation
            check_previous_job(session, data["previous_job_id"], job.organisation_id, this_job=job.id)
        changed = {k: v for k, v in data.items() if getattr(job, k) != v}
        for name, value in changed.items():
            setattr(job, name, value)
        if changed:
            bump_revision(job)
        return job


@blp.route("/jobs/<job:job_id>/circuits/<board>/<circuit>")
class CircuitPatch(MethodView):
    @blp.doc(requestBody=json_body_doc(CircuitPatchSchema, _ACCEPTED))
    @blp.response(200, CircuitStateSchema)
    def patch(self, job_id: int, board: str, circuit: str) -> Any:
        """Set or clear a circuit's external_ref (the id of the circuit in the caller's system)."""
        data = json_body(CircuitPatchSchema(), media_types=_ACCEPTED)
        session = get_session()
        job = lock_job(session, tenant(), job_id)
        row = session.scalars(select(Circuit).where(Circuit.job_id == job.id, Circuit.board == board,
                                                    Circuit.circuit == circuit)).first()
        if row is None:
            raise ApiError(404, "circuit_not_found", f"job {job.id} has no circuit {board}/{circuit}",
                           errors=[{"parameter": "circuit", "code": "circuit_not_found",
                                    "reason": "post readings for it first"}])
        if row.external_ref != data["external_ref"]:
            row.external_ref = data["external_ref"]
            bump_revision(job)
        return circuit_state(row, records_of([row])[0])
