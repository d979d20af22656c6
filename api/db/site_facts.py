"""A job's installation and board facts in the database: read them, merge into them, replace them.

Invariants:
- Facts merge as circuit records do (:func:`api.db.merging.merge_fields`): per field,
  later winning, a refusal or an N/A/LIM mark standing in for a value; every statement
  gets a ``fact_history`` row with its upload and location, in arrival order.
- A PUT replaces a record: the fields it does not state are cleared (a ``null``
  history row each, so the history says when a fact stopped being recorded).
- The caller holds the job's lock (``repository.lock_job``); these functions only add
  rows to its session and bump the job's revision when something changed.
- :func:`site_of_rows` builds the engine's :class:`~engine.Site` from the stored JSON,
  the same way :func:`api.intake.bodies.site_of_facts` builds a body's.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from api.db.merging import history_entries, merge_fields
from api.db.models import BOARD_SCOPE, INSTALLATION_SCOPE, FactHistory, Job, SiteFacts, Upload, utcnow
from api.db.repository import bump_revision
from api.intake.site_document import FactPart
from engine import BoardRecord, Site, build_board, build_installation

__all__ = ["fact_history", "merge_facts", "replace_facts", "site_of_rows", "site_rows"]


def site_rows(session: Session, job: Job) -> list[SiteFacts]:
    """The job's installation row (if any) and board rows, boards in the order first recorded."""
    query = select(SiteFacts).where(SiteFacts.job_id == job.id).order_by(SiteFacts.id)
    return list(session.scalars(query))


def site_of_rows(rows: Iterable[SiteFacts]) -> Site:
    installation = None
    boards: list[BoardRecord] = []
    for row in rows:
        if row.scope == INSTALLATION_SCOPE:
            installation, _errors = build_installation(row.fields)
        else:
            board, _errors = build_board({**row.fields, "board": row.board})
            if board is not None:
                boards.append(board)
    return Site.of(installation, boards)


def _row_for(session: Session, job: Job, rows: dict[tuple[str, str], SiteFacts], scope: str,
             board: str) -> SiteFacts:
    key = (scope, board)
    row = rows.get(key)
    if row is None:
        row = rows[key] = SiteFacts(job_id=job.id, scope=scope, board=board, fields={}, updated_at=utcnow())
        session.add(row)
        session.flush()  # its id, for the history rows
    return row


def _history(session: Session, upload: Upload, entries: list[tuple[SiteFacts, str, Any, str]]) -> int:
    now = utcnow()
    rows = [{"fact_id": fact.id, "field": name, "value": value, "upload_id": upload.id,
             "location": location, "recorded_at": now} for fact, name, value, location in entries]
    if rows:
        session.execute(insert(FactHistory), rows)
    return sum(1 for _f, _n, value, _l in entries if not (isinstance(value, dict) and "rejected" in value))


Touched = set[tuple[str, str]]  # (scope, board) of each record a post changed


def merge_facts(session: Session, job: Job, upload: Upload, facts: Sequence[FactPart]) -> tuple[int, Touched]:
    """Merge stated facts into the job's (later wins per field); (values taken, (scope, board) touched)."""
    if not facts:
        return 0, set()
    rows = {(r.scope, r.board): r for r in site_rows(session, job)}
    entries: list[tuple[SiteFacts, str, Any, str]] = []
    touched: Touched = set()
    now = utcnow()
    for part in facts:
        scope = INSTALLATION_SCOPE if part.scope == "installation" else BOARD_SCOPE
        row = _row_for(session, job, rows, scope, part.board)
        row.fields = merge_fields(row.fields, part.fields)
        row.updated_at, row.upload_id = now, upload.id
        entries += [(row, name, value, part.location) for name, value in history_entries(part.fields)]
        touched.add((scope, part.board))
    taken = _history(session, upload, entries)
    bump_revision(job)
    return taken, touched


def replace_facts(session: Session, job: Job, upload: Upload, scope: str, board: str,
                  fields: dict[str, Any], location: str) -> SiteFacts:
    """Replace one record's facts (a PUT): the fields stated, a cleared (``null``) row for each dropped."""
    rows = {(r.scope, r.board): r for r in site_rows(session, job) if r.scope == scope and r.board == board}
    row = _row_for(session, job, rows, scope, board)
    before = dict(row.fields)
    row.fields = merge_fields({}, fields)
    row.updated_at, row.upload_id = utcnow(), upload.id
    entries = [(row, name, value, location) for name, value in history_entries(fields)]
    stated = {name for _row, name, _value, _location in entries}
    dropped = [name for name, _value in history_entries(before) if name not in stated]
    entries += [(row, name, None, location) for name in dropped]
    _history(session, upload, entries)
    bump_revision(job)
    return row


def fact_history(session: Session, row: SiteFacts) -> dict[str, list[dict[str, Any]]]:
    """field → every value it had, oldest first."""
    query = select(FactHistory).where(FactHistory.fact_id == row.id).order_by(FactHistory.id)
    out: dict[str, list[dict[str, Any]]] = {}
    for entry in session.scalars(query):
        out.setdefault(entry.field, []).append({"value": entry.value, "upload_id": entry.upload_id,
                                                "location": entry.location, "recorded_at": entry.recorded_at})
    return out
