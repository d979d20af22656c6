"""``/v1/jobs/<id>/installation`` and ``/v1/jobs/<id>/boards[/<board>]``: the facts recorded once per
installation and once per board, which the job's circuits inherit.

Invariants:
- GET answers the current facts (``?history=true``: every value each field had, with its
  upload). A board the job does not know is a 404, an installation never recorded is
  ``null`` facts (200: the job exists, it has no installation facts yet).
- PUT replaces the record's facts (fields it leaves out are cleared, and the history says
  so); its body is a JSON object of the record's fields, read by the same rules as a site
  document's part (unknown names are warnings, bad values 422 with pointers). The body is
  kept as an upload, like a readings body, so nothing a client sent is lost.
- A change re-verifies every circuit of the job with the facts before and after: the
  answer lists the circuits whose outcome changed, and ``verdict.changed`` fires for them,
  in the same transaction (``api.webhooks.outbox``).
- Tenancy, idempotency and the job's lock as for readings: another organisation's job is
  a 404; an Idempotency-Key replays the first answer (``api.http.idempotency``).
"""

from __future__ import annotations

from typing import Any

from flask import Response
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE
from sqlalchemy.orm import Session

from api.answers import FactsAnswer, FactsState
from api.db.models import BOARD_SCOPE, INSTALLATION_SCOPE, Job, SiteFacts
from api.db.repository import get_job, job_records, lock_job, store_upload
from api.db.session import get_session, read_session
from api.db.site_facts import fact_history, replace_facts, site_of_rows, site_rows
from api.db.visits import previous_visit
from api.errors import ApiError, escape_pointer
from api.http.auth import tenant
from api.http.idempotency import IDEMPOTENCY_PARAMETER_DOC, answered_meanwhile, request_key
from api.intake.bodies import JSON_MEDIA_TYPE
from api.intake.site_document import read_site_document
from api.routes.common import json_body_document, raw_body, resolve_ruleset
from api.schemas.records import BoardInSchema, InstallationInSchema
from api.schemas.site import BoardListSchema, FactsAnswerSchema, FactsQuerySchema, FactsStateSchema
from api.webhooks.outbox import emit_readings, outcomes, subscribed
from engine import verify

__all__ = ["blp"]

blp = Blueprint("site", __name__, url_prefix="/v1",
                description="The installation's and each board's facts, which circuits inherit")


def _state(job: Job, row: SiteFacts | None, scope: str, board: str, history: bool) -> FactsState:
    session = get_session()
    return FactsState(job_id=job.id, scope=scope, board=board or None,
                      fields=None if row is None else dict(row.fields),
                      updated_at=None if row is None else row.updated_at,
                      upload_id=None if row is None else row.upload_id,
                      history=(fact_history(session, row) if row is not None else {}) if history else None)


def _find(rows: list[SiteFacts], scope: str, board: str) -> SiteFacts | None:
    return next((r for r in rows if r.scope == scope and r.board == board), None)


def _read_facts(scope: str, board: str) -> tuple[dict[str, Any], list[dict[str, Any]], bytes]:
    """The PUT body as a stored record's fields (JSON form), its warnings, and the bytes as sent."""
    body, _media_type, _charset = raw_body()
    document = json_body_document()
    if not isinstance(document, dict):
        raise ApiError(422, "invalid_body", f"the body must be a JSON object of the {scope}'s fields",
                       errors=[{"pointer": "", "code": "wrong_type", "reason": "expected an object"}])
    if scope == BOARD_SCOPE:
        named = document.get("board", board)
        if named != board:
            raise ApiError(422, "board_mismatch", f"the body names board {named!r}, the path {board!r}",
                           errors=[{"pointer": "/board", "code": "board_mismatch",
                                    "reason": f"the path names board {board!r}"}])
        found = read_site_document({"boards": [{**document, "board": board}]})
        prefix = "/boards/0"
    else:
        found = read_site_document({"installation": document})
        prefix = "/installation"
    warnings = [{**w, "pointer": w.get("pointer", "").removeprefix(prefix)} for w in found.warnings]
    if found.rejected:
        errors = [{**e, "pointer": e.get("pointer", "").removeprefix(prefix)} for e in found.rejected]
        raise ApiError(422, "invalid_facts", f"{len(errors)} fact(s) could not be taken; nothing changed",
                       errors=errors, extra={"warnings": warnings} if warnings else None)
    wanted = "installation" if scope == INSTALLATION_SCOPE else "board"
    (part,) = [p for p in found.facts if p.scope == wanted]
    return dict(part.fields), warnings, body


def _put(session: Session, job_id: int, scope: str, board: str) -> FactsAnswer | Response:
    with read_session() as reader:  # another organisation's job is a 404 before its body is looked at
        get_job(reader, tenant(), job_id)
    fields, warnings, body = _read_facts(scope, board)  # read before the job's (writer) lock is taken
    job = lock_job(session, tenant(), job_id)
    replayed = answered_meanwhile(session)  # the same key, committed while this one waited
    if replayed is not None:
        return replayed
    ruleset = resolve_ruleset(job.ruleset)
    records = job_records(session, job)
    previous = previous_visit(session, job)  # the previous_visit check sees Ze and Zdb (api/db/visits.py)
    before = outcomes(verify(records, ruleset, site=site_of_rows(site_rows(session, job)), previous=previous))
    upload = store_upload(session, job, body=body, content_type=JSON_MEDIA_TYPE,
                          adapter=scope, profile=None, idempotency_key=request_key())
    where = "/installation" if scope == INSTALLATION_SCOPE else f"/boards/{escape_pointer(board)}"
    row = replace_facts(session, job, upload, scope, board, fields, where)
    upload.status, upload.accepted, upload.rejected, upload.warnings = "merged", len(fields), [], warnings
    site = site_of_rows(site_rows(session, job))
    after = verify(records, ruleset, site=site, previous=previous)
    changed = [{"board": v.board, "circuit": v.circuit, "before": before.get(v.key), "after": v.outcome.value}
               for v in after if before.get(v.key) != v.outcome.value]
    # verdict.changed for each, committed with the change (when anyone subscribes)
    listening = subscribed(session, job.organisation_id, "verdict.changed")
    emit_readings(session, job, upload, touched=[], before=before if listening else None, after=after)
    return FactsAnswer(state=_state(job, row, scope, board, False), upload=upload, changed=changed,
                       warnings=warnings)


@blp.route("/jobs/<job:job_id>/installation")
class Installation(MethodView):
    @blp.arguments(FactsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, FactsStateSchema)
    def get(self, job_id: int, history: bool = False) -> Any:
        """The installation's facts (earthing, U0, supply, Ze and PFC at the origin …); null when none."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        return _state(job, _find(site_rows(session, job), INSTALLATION_SCOPE, ""), INSTALLATION_SCOPE, "",
                      history)

    @blp.doc(requestBody={"required": True, "content": {JSON_MEDIA_TYPE: {"schema": InstallationInSchema}}},
             parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(200, FactsAnswerSchema)
    def put(self, job_id: int) -> Any:
        """Replace the installation's facts; every circuit is verified again with them."""
        return _put(get_session(), job_id, INSTALLATION_SCOPE, "")


@blp.route("/jobs/<job:job_id>/boards")
class Boards(MethodView):
    @blp.arguments(FactsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, BoardListSchema)
    def get(self, job_id: int, history: bool = False) -> Any:
        """Every board the job has facts for, in the order first recorded."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        rows = [r for r in site_rows(session, job) if r.scope == BOARD_SCOPE]
        return {"job_id": job.id, "boards": [_state(job, r, BOARD_SCOPE, r.board, history) for r in rows]}


@blp.route("/jobs/<job:job_id>/boards/<board>")
class Board(MethodView):
    @blp.arguments(FactsQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, FactsStateSchema)
    def get(self, job_id: int, board: str, history: bool = False) -> Any:
        """One board's facts (Zdb, PFC at the board, what feeds it, its own earthing and RA …)."""
        session = get_session()
        job = get_job(session, tenant(), job_id)
        row = _find(site_rows(session, job), BOARD_SCOPE, board)
        if row is None:
            raise ApiError(404, "board_not_found", f"job {job.id} has no facts for board {board!r}",
                           errors=[{"parameter": "board", "code": "board_not_found",
                                    "reason": "PUT its facts, or post readings with a board line, first"}])
        return _state(job, row, BOARD_SCOPE, board, history)

    @blp.doc(requestBody={"required": True, "content": {JSON_MEDIA_TYPE: {"schema": BoardInSchema}}},
             parameters=[IDEMPOTENCY_PARAMETER_DOC])
    @blp.response(200, FactsAnswerSchema)
    def put(self, job_id: int, board: str) -> Any:
        """Replace one board's facts; every circuit is verified again with them."""
        return _put(get_session(), job_id, BOARD_SCOPE, board)

