"""A job's previous visit in the database: which job it is, and the engine's :class:`engine.PreviousVisit`.

Invariants:
- Within an organisation, jobs with the same ``installation_ref`` are visits to one
  installation. They are ordered by the date their readings were taken
  (``tested_on``; a job without one counts from the UTC date it was created), then
  by creation time, then by id; a job's previous visit is the one just before it in
  that order. So the latest earlier visit counts, by the date of the readings, not
  by the order they were posted.
- A job naming ``previous_job_id`` has that job as its previous visit, whatever its
  installation or date. Naming one is refused (422, pointer ``/previous_job_id``)
  unless it is another job of the same organisation: another organisation's job is
  "no such job", word for word what a missing one gets, so nothing leaks.
- Tenancy: every query here is limited to the job's own organisation; another
  organisation's job with the same ``installation_ref`` is never a previous visit.
- The rename map is stored as given (``{"boards": {old: new}, "circuits": [{"from":
  {"board", "circuit"}, "to": {"board", "circuit"}}]}``) and handed to the engine as
  is: nothing is guessed from names or readings.
- :func:`previous_visit` loads only the previous circuits of the boards asked for (by
  their old names, through the map) and of their feeder chains, as a page of
  verdicts loads the current ones (:mod:`api.db.context`).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from datetime import date
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from api.db.context import context_rows
from api.db.models import Job
from api.db.repository import job_rows, records_of_rows
from api.db.site_facts import site_of_rows, site_rows
from api.errors import ApiError
from engine import PreviousVisit

__all__ = ["check_previous_job", "previous_job", "previous_visit", "visit_order", "visit_renames",
           "visit_tag"]

Key = tuple[str, str]


def visit_order(job: Job) -> tuple[date, Any, int]:
    """Where a job stands among its installation's visits: (date of readings, creation time, id)."""
    return (job.tested_on or job.created_at.date(), job.created_at, job.id)


def check_previous_job(session: Session, job_id: int | None, organisation_id: int,
                       this_job: int | None = None) -> None:
    """Refuse a ``previous_job_id`` that is not another job of the same organisation (422)."""
    if job_id is None:
        return
    if job_id == this_job:
        raise ApiError(422, "previous_job_invalid", "a job cannot be its own previous visit",
                       errors=[{"pointer": "/previous_job_id", "code": "previous_job_invalid",
                                "reason": "names this job"}])
    found = session.get(Job, job_id)
    if found is None or found.organisation_id != organisation_id:
        raise ApiError(422, "previous_job_not_found", f"there is no job {job_id} to be the previous visit",
                       errors=[{"pointer": "/previous_job_id", "code": "previous_job_not_found",
                                "reason": f"no job with id {job_id}"}])


def previous_job(session: Session, job: Job) -> Job | None:
    """The job's previous visit (see the module's invariants), or ``None`` on a first visit."""
    if job.previous_job_id is not None:
        named = session.get(Job, job.previous_job_id)
        if named is None or named.organisation_id != job.organisation_id:
            return None  # refused when written; never another organisation's
        return named
    if not job.installation_ref:
        return None
    query = select(Job).where(Job.organisation_id == job.organisation_id,
                              Job.installation_ref == job.installation_ref, Job.id != job.id)
    here = visit_order(job)
    earlier = [other for other in session.scalars(query) if visit_order(other) < here]
    return max(earlier, key=visit_order) if earlier else None


def visit_tag(session: Session, job: Job) -> str:
    """What the previous visit adds to a verdicts ETag: its job and revision (``""`` on a first visit).

    The verdicts compare with the previous visit's readings, so a change to those is a change to
    the answer; a job row or two, no record is read.
    """
    before = previous_job(session, job)
    return "" if before is None else f"&previous={before.id}:{before.revision}"


def visit_renames(visit_map: Mapping[str, Any] | None) -> tuple[dict[str, str], dict[Key, Key]]:
    """(old board → new, old circuit key → new) of a stored rename map."""
    if not visit_map:
        return {}, {}
    boards = {str(old): str(new) for old, new in (visit_map.get("boards") or {}).items()}
    circuits = {(str(move["from"]["board"]), str(move["from"]["circuit"])):
                (str(move["to"]["board"]), str(move["to"]["circuit"]))
                for move in visit_map.get("circuits") or []}
    return boards, circuits


def _old_boards(boards: Iterable[str], renames: Mapping[str, str], moves: Mapping[Key, Key]) -> set[str]:
    wanted = set(boards)
    old = set(wanted)
    old |= {before for before, after in renames.items() if after in wanted}
    old |= {before[0] for before, after in moves.items() if after[0] in wanted}
    return old


def previous_visit(session: Session, job: Job, boards: Iterable[str] | None = None) -> PreviousVisit | None:
    """The engine's previous visit of ``job`` (``None`` on a first visit), with the previous circuits
    of ``boards`` (names now; ``None``: every board) and their feeder chains."""
    before = previous_job(session, job)
    if before is None:
        return None
    renames, moves = visit_renames(job.visit_map)
    site = site_of_rows(site_rows(session, before))
    if boards is None:
        rows = job_rows(session, before.id)
    else:
        rows = context_rows(session, before.id, _old_boards(boards, renames, moves), site)
    return PreviousVisit(job=before.id, tested_on=before.tested_on or before.created_at.date(),
                         records=tuple(records_of_rows(rows)), site=site, boards=renames, circuits=moves)
