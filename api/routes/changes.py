"""``GET /v1/jobs/<id>/changes``: what changed since the installation's previous visit, for the report.

Invariants:
- The previous visit is :func:`api.db.visits.previous_job`'s (an explicit
  ``previous_job_id``, else the latest earlier job of the same organisation with the
  same ``installation_ref``, by the date the readings were taken); another
  organisation's job is never used.
- The listing is :func:`engine.visit_changes` over the job's records and facts and the
  previous visit's, with the job's ruleset: the same comparisons and thresholds as the
  ``previous_visit`` check in the job's verdicts.
- A first visit answers 200 with ``previous: null`` and every list empty.
- Tenancy and scope as every job GET: another organisation's job is a 404, ``read`` suffices.
"""

from __future__ import annotations

from typing import Any

from flask.views import MethodView
from flask_smorest import Blueprint

from api.db.repository import get_job, job_records
from api.db.session import get_session
from api.db.site_facts import site_of_rows, site_rows
from api.db.visits import previous_visit
from api.http.auth import tenant
from api.routes.common import resolve_ruleset
from api.schemas.changes import ChangesSchema
from engine import visit_changes

__all__ = ["blp"]

blp = Blueprint("changes", __name__, url_prefix="/v1", description="What changed since the previous visit")

_FIRST_VISIT: dict[str, Any] = {"previous": None, "circuits": [], "appeared": [], "gone": [], "ambiguous": [],
                                "supply": []}


@blp.route("/jobs/<job:job_id>/changes")
class JobChanges(MethodView):
    @blp.response(200, ChangesSchema)
    def get(self, job_id: int) -> Any:
        """What changed since the installation's previous visit: per circuit the readings and records
        that differ (and which need a look), circuits appeared and gone, Ze and Zdb."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        previous = previous_visit(session, job)
        if previous is None:
            return {"job_id": job.id, **_FIRST_VISIT}
        site = site_of_rows(site_rows(session, job))
        listing = visit_changes(job_records(session, job), previous, resolve_ruleset(job.ruleset), site=site)
        return {"job_id": job.id, **listing}
