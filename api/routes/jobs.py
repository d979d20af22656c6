"""Jobs (site visits): create, list (cursor pages), read; their merged circuits and verdicts."""

from __future__ import annotations

from typing import Any
from urllib.parse import urlencode

from flask import Response, request
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE
from sqlalchemy.orm import Session

from api.answers import VerifyAnswer, circuit_state, compact_answer, verify_body
from api.db.context import context_rows
from api.db.models import Circuit, Job
from api.db.repository import (
    circuits_page,
    create_job,
    decode_cursor,
    encode_cursor,
    get_job,
    job_history,
    list_jobs,
    records_of,
    records_of_rows,
)
from api.db.session import get_session
from api.db.site_facts import site_of_rows, site_rows
from api.db.visits import check_previous_job, previous_visit, visit_tag
from api.http.auth import tenant
from api.http.conditional import if_none_match, parse_rfc3339, verdicts_etag
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC
from api.render import DEFAULT_POLICY, MEDIA_TYPES, render
from api.routes.common import (
    NOTICE_HEADER,
    compact_doc,
    compact_response,
    json_body,
    json_body_doc,
    resolve_ruleset,
    settings,
    view_of,
)
from api.schemas.changes import VISIT_FIELDS
from api.schemas.compact import CompactJobVerdictsSchema
from api.schemas.jobs import (
    CircuitsQuerySchema,
    CircuitsResponseSchema,
    JobCreateSchema,
    JobListQuerySchema,
    JobListSchema,
    JobSchema,
    JobVerdictsSchema,
    VerdictsQuerySchema,
)
from api.webhooks.outbox import emit_job_created
from engine import NOTICE, verify

_LINK_DOC = {"Link": {"schema": {"type": "string"},
                      "description": 'the next page: <url>; rel="next" (RFC 8288), absent on the last'}}
IF_NONE_MATCH_DOC = {"in": "header", "name": "If-None-Match", "required": False, "schema": {"type": "string"},
                     "description": "an ETag of an earlier answer: 304 while the verdicts are unchanged"}

__all__ = ["blp"]

blp = Blueprint("jobs", __name__, url_prefix="/v1", description="Jobs, their circuits and verdicts")


@blp.route("/jobs")
class Jobs(MethodView):
    @blp.doc(requestBody=json_body_doc(JobCreateSchema), parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(201, JobSchema)
    def post(self) -> Any:
        """Create a job: reference, site, and the ruleset its verdicts use."""
        data = json_body(JobCreateSchema())
        ruleset = resolve_ruleset(data.get("ruleset"), pointer="/ruleset")
        session = get_session()
        check_previous_job(session, data.get("previous_job_id"), tenant())
        job = create_job(session, tenant(), reference=data["reference"], site=data["site"],
                         ruleset=ruleset.id, external_ref=data.get("external_ref"))
        for name in VISIT_FIELDS:  # the installation and its previous visit (api/db/visits.py)
            setattr(job, name, data.get(name))
        emit_job_created(session, job, JobSchema().dump(job))  # committed with the job, or not at all
        return job, 201, {"Location": f"/v1/jobs/{job.id}"}

    @blp.arguments(JobListQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, JobListSchema)
    def get(self, **query: Any) -> Any:
        """Jobs in creation order, a page at a time (`next_cursor` → `?cursor=`).

        `?updated_since=` (RFC 3339) keeps jobs changed at or after that time;
        `?external_ref=` the jobs with that reference in the caller's system.
        """
        limit = query.get("limit") or settings().page_limit
        since = query.get("updated_since")
        jobs, cursor = list_jobs(get_session(), tenant(), limit=limit, cursor=query.get("cursor"),
                                 reference=query.get("reference"), external_ref=query.get("external_ref"),
                                 updated_since=None if since is None else parse_rfc3339(
                                     since, parameter="updated_since"))
        return {"items": jobs, "next_cursor": cursor, "limit": limit}


@blp.route("/jobs/<job:job_id>")
class JobDetail(MethodView):
    @blp.response(200, JobSchema)
    def get(self, job_id: int) -> Any:
        """One job."""
        return get_job(get_session(), tenant(), job_id)


def _page_links(job_id: int, what: str, cursor: str | None, query: dict[str, Any]) -> dict[str, str]:
    """``Link: <…>; rel="next"`` (RFC 8288) to the next page, keeping the request's other parameters."""
    if cursor is None:
        return {}
    kept = {k: v for k, v in request.args.items() if k != "cursor"}
    target = f"/v1/jobs/{job_id}/{what}?" + urlencode({**kept, "cursor": cursor})
    return {"Link": f'<{target}>; rel="next"'}


def _page(session: Session, job: Job, query: dict[str, Any]) -> tuple[list[Circuit], str | None, int]:
    limit = query.get("limit") or settings().page_limit
    after = decode_cursor(query["cursor"]) if query.get("cursor") else None
    rows, last = circuits_page(session, job, limit=limit, after=after, board=query.get("board"))
    return rows, encode_cursor(last) if last is not None else None, limit


@blp.route("/jobs/<job:job_id>/circuits")
class JobCircuits(MethodView):
    @blp.arguments(CircuitsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, CircuitsResponseSchema, headers=_LINK_DOC)
    def get(self, job_id: int, **query: Any) -> Any:
        """The job's merged circuit records, a page at a time (`?limit`, `?cursor`, `?board`);
        `?history=true` adds every value of each field."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        rows, cursor, limit = _page(session, job, query)
        by_circuit = job_history(session, job, [row.id for row in rows]) if query["history"] else {}
        states = [circuit_state(row, record, by_circuit.get(row.id, {}) if query["history"] else None)
                  for row, record in zip(rows, records_of(rows), strict=True)]
        body = {"job_id": job.id, "circuits": states, "next_cursor": cursor, "limit": limit}
        return body, _page_links(job.id, "circuits", cursor, query)


_COMPACT_PAGE = CompactJobVerdictsSchema()


@blp.route("/jobs/<job:job_id>/verdicts")
class JobVerdicts(MethodView):
    @blp.arguments(VerdictsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.doc(parameters=[IF_NONE_MATCH_DOC], responses={
        304: {"description": "unchanged since that ETag"},
        200: {"content": {**{media.split(";")[0]: {"schema": {"type": "string"}}
                             for fmt, media in MEDIA_TYPES.items() if fmt != "json"},
                          **compact_doc(CompactJobVerdictsSchema)}}})
    @blp.response(200, JobVerdictsSchema, headers={"ETag": {"schema": {"type": "string"}}, **_LINK_DOC})
    def get(self, job_id: int, **query: Any) -> Any:
        """Verdicts of the job's circuits, a page at a time (`?limit`, `?cursor`, `?board`),
        recomputed now; `If-None-Match` → 304 while unchanged; `?format=` renders the page;
        `?view=compact` answers rows of figures instead of sentences."""
        view = view_of(query)
        session = get_session()
        job = get_job(session, tenant(), job_id)
        ruleset = resolve_ruleset(job.ruleset)
        variant = "&".join(f"{k}={v}" for k, v in sorted(query.items())) + visit_tag(session, job)
        etag = verdicts_etag(job, ruleset, variant)  # from job rows alone: a 304 reads no record
        if if_none_match(request.headers.get("If-None-Match"), etag):
            return Response(status=304, headers={"ETag": etag})
        rows, cursor, limit = _page(session, job, query)
        wanted = {(row.board, row.circuit) for row in rows}
        # Every circuit of the page is judged with what its verdict depends on in view (its board,
        # the boards feeding it: api.db.context): a page costs its boards, not the whole job.
        site = site_of_rows(site_rows(session, job))
        context = context_rows(session, job.id, {board for board, _circuit in wanted}, site)
        previous = previous_visit(session, job, {board for board, _circuit in wanted})  # api/db/visits.py
        headers = {"ETag": etag, **_page_links(job.id, "verdicts", cursor, query)}
        if view == "compact":
            compact = verify(records_of_rows(context), ruleset, only=wanted, site=site, view="compact",
                             previous=previous)
            return compact_response(_COMPACT_PAGE.dump(compact_answer(
                compact, ruleset=ruleset, job_id=job.id, next_cursor=cursor, limit=limit, site=site)),
                {**headers, NOTICE_HEADER: NOTICE})
        verdicts = verify(records_of_rows(context), ruleset, only=wanted, site=site, previous=previous)
        answer = VerifyAnswer(ruleset=ruleset, verdicts=verdicts, job_id=job.id, next_cursor=cursor,
                              limit=limit, site=site)
        if query.get("format") in (None, "json"):
            return answer, headers
        text, media_type = render(verify_body(ruleset, verdicts, [], site=site), query["format"],
                                  DEFAULT_POLICY)
        return Response(text, status=200, content_type=media_type,
                        headers={**headers, NOTICE_HEADER: NOTICE})
