"""Keeping another system in step: revisions, the verdicts' ETag, external references.

Invariants:
- A job's ``revision`` goes up by one, and ``updated_at`` moves, on every
  change to the job or its records (a merge, a PATCH of the job or of one of
  its circuits), in the transaction that makes the change.
- The ETag of ``GET /v1/jobs/<id>/verdicts`` is derived from the job's id and
  revision, its ruleset's id and version and the engine version: everything
  the verdicts are computed from. It is computed without loading a record, so
  a 304 costs one row read. It is a strong validator: equal ETags mean
  byte-identical bodies (RFC 9110 §8.8.3).
- ``If-None-Match`` uses the weak comparison (RFC 9110 §13.1.2): ``W/"x"``
  matches ``"x"``; ``*`` matches any current representation.
"""

from __future__ import annotations

import hashlib
from datetime import UTC, datetime

from api.db.models import Job, utcnow
from api.errors import ApiError
from engine import Ruleset, __version__

__all__ = ["bump_revision", "if_none_match", "parse_rfc3339", "verdicts_etag"]


def bump_revision(job: Job) -> None:
    job.updated_at = utcnow()
    job.revision += 1


def verdicts_etag(job: Job, ruleset: Ruleset, variant: str = "") -> str:
    """``variant`` names what else shapes the body (the page, the view, the format)."""
    basis = f"verdicts:{job.id}:{job.revision}:{ruleset.id}:{ruleset.version}:{__version__}:{variant}"
    return '"' + hashlib.sha256(basis.encode()).hexdigest()[:32] + '"'


def if_none_match(header: str | None, etag: str) -> bool:
    """True when ``If-None-Match`` names ``etag`` (so the answer is 304)."""
    if not header:
        return False
    wanted = etag.removeprefix("W/")
    for candidate in header.split(","):
        tag = candidate.strip()
        if tag == "*" or tag.removeprefix("W/") == wanted:
            return True
    return False


def parse_rfc3339(text: str, *, parameter: str) -> datetime:
    """An RFC 3339 date-time with an offset (``Z`` or ``±hh:mm``), as an aware UTC datetime.

    Empty text, a date-time without an offset, and one whose UTC time falls outside years
    1–9999 (``0001-01-01T00:00:00+01:00``) are 422 problems naming ``parameter``."""
    try:
        # A "+" left unescaped in a query string arrives as a space: put it back.
        parsed: datetime | None = datetime.fromisoformat(text.strip().replace(" ", "+").replace("z", "Z"))
        if parsed is not None and parsed.tzinfo is not None:
            parsed = parsed.astimezone(UTC)  # year 1 at +01:00 is before year 1 in UTC: OverflowError
    except (ValueError, OverflowError):
        parsed = None
    if parsed is None or parsed.tzinfo is None or "T" not in text.upper():
        raise ApiError(422, "invalid_parameters", f"{parameter} must be an RFC 3339 date-time with "
                       "an offset, such as 2026-12-01T09:30:00Z",
                       errors=[{"parameter": parameter, "code": "bad_datetime",
                                "reason": "RFC 3339 date-time with Z or an offset"}])
    return parsed.astimezone(UTC)
