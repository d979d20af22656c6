"""Jobs, uploads and merged circuit records in the database: every query the views need.

Invariants:
- Merging is per ``(board, circuit)`` and per field, later winning; a field
  value is never dropped: every value received gets a ``field_history`` row
  with its upload and input location, in arrival order.
- Posting to a job first locks the job (``SELECT … FOR UPDATE`` on
  PostgreSQL; SQLite's ``BEGIN IMMEDIATE`` in ``api.db``), so two writers to
  one job apply one after the other and lose nothing.
- A job's records are loaded in one query (no N+1); its history in one more.
- Tenancy: every job query takes the organisation it is limited to as an
  argument (the request's, from ``api.http.auth.tenant``; ``None`` only for the
  administrator's CLI); another organisation's job is "there is no job N", word
  for word what a missing job gets.
- Values are passed explicitly: :func:`merge_items` takes the job's rows that the
  caller read (:func:`job_rows`) and returns the records after the merge; no
  function reads a side channel left by another.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import json
from collections.abc import Iterable, Mapping, Sequence
from datetime import datetime
from functools import lru_cache
from typing import Any, NamedTuple

from sqlalchemy import Text, and_, cast, insert, or_, select, update
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from api.db.merging import history_entries, merge_fields
from api.db.models import Circuit, FieldHistory, Job, Organisation, Upload, utcnow
from api.db.models.jobs import new_job_id
from api.errors import ApiError
from api.intake.bodies import Item
from engine import CircuitRecord, build_record

__all__ = [
    "LOCAL_ORGANISATION",
    "Merged",
    "Row",
    "bump_revision",
    "circuits_page",
    "create_job",
    "decode_cursor",
    "encode_cursor",
    "get_job",
    "get_upload",
    "job_circuits",
    "job_history",
    "job_records",
    "job_rows",
    "list_jobs",
    "list_uploads",
    "lock_job",
    "merge_items",
    "records_of",
    "records_of_rows",
    "store_upload",
    "upload_circuit_keys",
]

LOCAL_ORGANISATION = "local"


class Row(NamedTuple):
    """One stored circuit as plain columns."""

    id: int
    board: str
    circuit: str
    text: str | None  # the fields as stored JSON text; None for a circuit inserted by this merge


class Merged(NamedTuple):
    """What :func:`merge_items` did: values merged, circuits touched, every record after it."""

    accepted: int
    touched: list[tuple[str, str]]
    records: list[CircuitRecord]


def local_organisation(session: Session) -> Organisation:
    found = session.scalars(select(Organisation).where(Organisation.slug == LOCAL_ORGANISATION)).first()
    if found is None:  # seeded by migration 0001; missing only if someone deleted it
        raise ApiError(500, "no_organisation", "the 'local' organisation is missing; "
                       "re-run `ohmtally db upgrade` on a fresh database")
    return found


def bump_revision(job: Job) -> None:
    """A change to the job or its records: +1 revision (the verdicts' ETag), ``updated_at`` now."""
    job.updated_at = utcnow()
    job.revision += 1


_ID_ATTEMPTS = 5
_CURSOR_MAX = 2**63 - 1  # a 64-bit id: anything larger names no row and is not a cursor of ours


def create_job(session: Session, organisation_id: int, *, reference: str, site: str, ruleset: str,
               external_ref: str | None) -> Job:
    """A new job with a random id (``new_job_id``); a clash with an existing id is tried again.

    The insert runs in a SAVEPOINT, so a clash (about one in 10^10 per job at a million
    jobs) costs a retry, never the request's transaction.
    """
    now = utcnow()
    for _attempt in range(_ID_ATTEMPTS):
        job = Job(id=new_job_id(), organisation_id=organisation_id, reference=reference, site=site,
                  ruleset=ruleset, external_ref=external_ref, created_at=now, updated_at=now)
        if session.get(Job, job.id) is not None:
            continue
        try:
            with session.begin_nested():
                session.add(job)
        except IntegrityError:
            continue
        return job
    raise ApiError(503, "no_job_id", "no free job id was found; send the request again")


def _bad_cursor() -> ApiError:
    return ApiError(400, "bad_cursor", "the cursor is not one this API handed out",
                    errors=[{"parameter": "cursor", "code": "bad_cursor",
                             "reason": "use next_cursor from the previous page"}])


def encode_cursor(last_id: int, *, at: datetime | None = None) -> str:
    """An opaque page cursor: the last row's id (and, for jobs, its creation time)."""
    data: dict[str, Any] = {"after": last_id}
    if at is not None:
        data["at"] = at.isoformat()
    raw = json.dumps(data, separators=(",", ":")).encode()
    return base64.urlsafe_b64encode(raw).decode().rstrip("=")


def _cursor_data(cursor: str) -> dict[str, Any]:
    try:
        padded = cursor + "=" * (-len(cursor) % 4)
        data = json.loads(base64.urlsafe_b64decode(padded.encode()))
        after = data["after"]
    except (ValueError, KeyError, TypeError, binascii.Error, UnicodeDecodeError, RecursionError):
        raise _bad_cursor() from None
    if not isinstance(after, int) or isinstance(after, bool) or not 0 <= after <= _CURSOR_MAX:
        raise _bad_cursor()  # 2**63 and beyond (or below 0) fit no id column: a forged cursor
    return dict(data)


def decode_cursor(cursor: str) -> int:
    """The id a page continues after; 400 ``bad_cursor`` for anything we did not hand out."""
    after: int = _cursor_data(cursor)["after"]
    return after


def _job_position(cursor: str) -> tuple[datetime, int]:
    """(creation time, id) of the last job of the previous page."""
    data = _cursor_data(cursor)
    try:
        at = datetime.fromisoformat(data["at"])
        if at.tzinfo is None:
            raise ValueError
    except (KeyError, TypeError, ValueError):
        raise _bad_cursor() from None
    return at, int(data["after"])


def list_jobs(session: Session, tenant: int | None, *, limit: int, cursor: str | None,
              reference: str | None,
              external_ref: str | None = None, updated_since: datetime | None = None
              ) -> tuple[list[Job], str | None]:
    """One page in creation order, and the cursor of the next page (``None`` at the end).

    Ordered by creation time, then id (ids are random: they order nothing). A job's
    place never changes, and a job created while a client pages is stamped later than
    the jobs it has seen, so it lands after the cursor and never shifts a page it has
    seen (``updated_since`` uses ``>=``). The cursor holds the last job's creation time
    and id, both shown in that job: it reveals nothing the page did not.
    """
    query = select(Job).order_by(Job.created_at, Job.id).limit(limit + 1)
    if tenant is not None:
        query = query.where(Job.organisation_id == tenant)
    if cursor:
        at, after = _job_position(cursor)
        query = query.where(or_(Job.created_at > at, and_(Job.created_at == at, Job.id > after)))
    if reference is not None:
        query = query.where(Job.reference == reference)
    if external_ref is not None:
        query = query.where(Job.external_ref == external_ref)
    if updated_since is not None:
        query = query.where(Job.updated_at >= updated_since)
    rows = list(session.scalars(query))
    more = len(rows) > limit
    page = rows[:limit]
    return page, encode_cursor(page[-1].id, at=page[-1].created_at) if more and page else None


def get_job(session: Session, tenant: int | None, job_id: int) -> Job:
    """The job, if it is the organisation's (``tenant``; ``None``: any), else a 404."""
    job = session.get(Job, job_id)
    if job is None or (tenant is not None and job.organisation_id != tenant):
        raise ApiError(404, "job_not_found", f"there is no job {job_id}",
                       errors=[{"parameter": "job_id", "code": "job_not_found",
                                "reason": f"no job with id {job_id}"}])
    return job


def lock_job(session: Session, tenant: int | None, job_id: int) -> Job:
    """The job, locked for this transaction against other writers."""
    query = select(Job).where(Job.id == job_id)
    if tenant is not None:
        query = query.where(Job.organisation_id == tenant)
    job = session.scalars(query.with_for_update()).first()
    if job is None:
        return get_job(session, tenant, job_id)
    return job


def upload_circuit_keys(session: Session, upload: Upload) -> set[tuple[str, str]]:
    """The circuits an upload wrote a value to (from its history rows)."""
    query = (select(Circuit.board, Circuit.circuit).join(FieldHistory, FieldHistory.circuit_id == Circuit.id)
             .where(FieldHistory.upload_id == upload.id).distinct())
    return {(board, circuit) for board, circuit in session.execute(query)}


def store_upload(session: Session, job: Job, *, body: bytes, content_type: str,
                 adapter: str | None, profile: str | None, idempotency_key: str | None = None) -> Upload:
    upload = Upload(job_id=job.id, content_type=content_type or "application/octet-stream",
                    adapter=adapter, profile=profile, sha256=hashlib.sha256(body).hexdigest(),
                    size=len(body), body=body, received_at=utcnow(), status="rejected",
                    accepted=0, rejected=[], idempotency_key=idempotency_key)
    session.add(upload)
    session.flush()
    return upload


def job_rows(session: Session, job_id: int) -> list[Row]:
    """(id, board, circuit, fields as stored JSON text) of every circuit of the job, in id order.

    Plain columns, no ORM objects: a logger's post reads the whole job each time, and
    the text is both what is parsed and the key of the record cache (:func:`_record`).
    """
    query = (select(Circuit.id, Circuit.board, Circuit.circuit, cast(Circuit.fields, Text))
             .where(Circuit.job_id == job_id).order_by(Circuit.id))
    return [Row(id, board, circuit, text) for id, board, circuit, text in session.execute(query)]


def merge_items(session: Session, job: Job, upload: Upload, items: Iterable[Item],
                stored: Sequence[Row]) -> Merged:
    """Merge items into the job's circuits, whose ``stored`` rows the caller read under the job's lock."""
    items = list(items)  # walked twice: once to merge, once for the history rows
    rows = {(r.board, r.circuit): r for r in stored}
    now = utcnow()
    merged: dict[tuple[str, str], dict[str, Any]] = {}
    for item in items:  # later wins, per circuit and per field
        key = (item.board, item.circuit)
        values = merged.get(key)
        if values is None:
            row = rows.get(key)
            values = json.loads(row.text) if row is not None and row.text else {}
        merged[key] = merge_fields(values, item.fields)  # api.db.merging: values, refusals, marks
    changed = [{"id": rows[key].id, "fields": values, "updated_at": now, "upload_id": upload.id}
               for key, values in merged.items() if key in rows]
    if changed:  # one executemany UPDATE by primary key
        session.execute(update(Circuit), changed)
    fresh = [key for key in merged if key not in rows]
    if fresh:  # one multi-row INSERT that hands back the new ids, in parameter order
        ids = session.scalars(
            insert(Circuit).returning(Circuit.id, sort_by_parameter_order=True),
            [{"job_id": job.id, "board": board, "circuit": circuit, "fields": merged[(board, circuit)],
              "updated_at": now, "upload_id": upload.id} for board, circuit in fresh]).all()
        for (board, circuit), new_id in zip(fresh, ids, strict=True):
            rows[(board, circuit)] = Row(new_id, board, circuit, None)
    history = [{"circuit_id": rows[(item.board, item.circuit)].id, "field": name, "value": value,
                "upload_id": upload.id, "location": item.location, "recorded_at": now}
               for item in items for name, value in history_entries(item.fields)]
    if history:  # one multi-row INSERT, in arrival order, instead of an ORM object per value
        session.execute(insert(FieldHistory), history)
    bump_revision(job)
    after = records_of_rows(sorted(rows.values(), key=lambda r: r.id), merged)
    taken = sum(1 for entry in history if not _is_refusal(entry["value"]))
    return Merged(accepted=taken, touched=list(merged), records=after)


def _is_refusal(value: Any) -> bool:
    return isinstance(value, dict) and "rejected" in value


def job_circuits(session: Session, job: Job) -> list[Circuit]:
    return list(session.scalars(select(Circuit).where(Circuit.job_id == job.id).order_by(Circuit.id)))


def circuits_page(session: Session, job: Job, *, limit: int, after: int | None = None,
                  board: str | None = None) -> tuple[list[Circuit], int | None]:
    """One page of the job's circuits in the order they were first recorded, and the id to
    continue after (``None`` at the end).

    Ordered by id, which only grows: a circuit recorded while a client pages lands after
    every page it has seen, and a circuit never moves, so every circuit is listed exactly
    once across the pages even while readings arrive.
    """
    query = select(Circuit).where(Circuit.job_id == job.id).order_by(Circuit.id).limit(limit + 1)
    if after is not None:
        query = query.where(Circuit.id > after)
    if board is not None:
        query = query.where(Circuit.board == board)
    rows = list(session.scalars(query))
    more = len(rows) > limit
    page = rows[:limit]
    return page, page[-1].id if more and page else None


def records_of(circuits: Sequence[Circuit]) -> list[CircuitRecord]:
    out: list[CircuitRecord] = []
    for row in circuits:
        record, _errors = build_record({"board": row.board, "circuit": row.circuit, **row.fields})
        if record is not None:
            out.append(record)
    return out


def job_records(session: Session, job: Job) -> list[CircuitRecord]:
    """The job's records in circuit order."""
    return records_of_rows(job_rows(session, job.id))


def records_of_rows(rows: Iterable[Row], merged: Mapping[tuple[str, str], dict[str, Any]] | None = None
                    ) -> list[CircuitRecord]:
    """Records of stored rows, in their order; ``merged`` holds fields that replace a row's stored ones."""
    merged = merged or {}
    out: list[CircuitRecord] = []
    for row in rows:
        values = merged.get((row.board, row.circuit))
        if values is not None:
            record, _errors = build_record({"board": row.board, "circuit": row.circuit, **values})
        else:
            record = _record(row.board, row.circuit, row.text or "{}")
        if record is not None:
            out.append(record)
    return out


@lru_cache(maxsize=4096)
def _record(board: str, circuit: str, text: str) -> CircuitRecord | None:
    """A stored circuit's record, cached on its exact stored text.

    A pure function of its arguments (records are frozen, the engine never mutates
    them), so the cache needs no invalidation: changed fields are different text.
    A logger's post changes 1–10 circuits of a job and re-reads the rest. 4,096
    entries (a few kB each, some MB per worker) hold the jobs a worker is busy with.
    """
    record, _errors = build_record({"board": board, "circuit": circuit, **json.loads(text)})
    return record


def job_history(session: Session, job: Job, circuit_ids: Sequence[int]
                ) -> dict[int, dict[str, list[dict[str, Any]]]]:
    """circuit id → field → values oldest first, for the given circuits of the job, in one query."""
    query = (select(FieldHistory).join(Circuit, Circuit.id == FieldHistory.circuit_id)
             .where(Circuit.job_id == job.id, FieldHistory.circuit_id.in_(circuit_ids))
             .order_by(FieldHistory.id))
    out: dict[int, dict[str, list[dict[str, Any]]]] = {}
    for row in session.scalars(query):
        out.setdefault(row.circuit_id, {}).setdefault(row.field, []).append({
            "value": row.value, "upload_id": row.upload_id, "location": row.location,
            "recorded_at": row.recorded_at})
    return out


def list_uploads(session: Session, job: Job) -> list[Upload]:
    return list(session.scalars(select(Upload).where(Upload.job_id == job.id).order_by(Upload.id)))


def get_upload(session: Session, job: Job, upload_id: int) -> Upload:
    upload = session.get(Upload, upload_id)
    if upload is None or upload.job_id != job.id:
        raise ApiError(404, "upload_not_found", f"job {job.id} has no upload {upload_id}",
                       errors=[{"parameter": "upload_id", "code": "upload_not_found",
                                "reason": f"no upload {upload_id} on job {job.id}"}])
    return upload
