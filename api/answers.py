"""What the views answer, as data: the schemas of :mod:`api.schemas` turn it into JSON.

Invariants:
- A view returns one of these (or an ORM row) and its ``@blp.response`` schema
  serialises it; nothing here builds JSON or a ``Response``.
- :func:`verify_body` is the one way the body of a verify answer is produced, for
  ``POST /v1/verify``, ``GET /v1/jobs/<id>/verdicts`` and the offline ``ohmtally
  verify --format json`` alike, so all three give the same document.
- Every answer that carries verdicts carries the safety notice (the schemas add it).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from api.db.models import Circuit, Upload
from api.schemas.compact import CompactVerifyResponseSchema
from api.schemas.verdicts import VerifyResponseSchema
from engine import CircuitRecord, Ruleset, Site, Verdict
from engine.compact import CompactVerdict, encode

__all__ = [
    "CircuitState",
    "CompactAnswer",
    "FactsAnswer",
    "FactsState",
    "ReadingsAnswer",
    "VerifyAnswer",
    "circuit_state",
    "compact_answer",
    "verify_body",
]


@dataclass(frozen=True, slots=True, kw_only=True)
class VerifyAnswer:
    """Verdicts under a ruleset, and the inputs that were not taken."""

    ruleset: Ruleset
    verdicts: Sequence[Verdict]
    rejected: Sequence[Mapping[str, Any]] = ()
    warnings: Sequence[Mapping[str, Any]] = ()
    site: Site | None = None  # the installation and boards the circuits inherit from, if any
    job_id: int | None = None
    next_cursor: str | None = None
    limit: int | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class CompactAnswer:
    """The compact view of a verdicts answer (``api.schemas.compact``): rows and their legend."""

    ruleset: Ruleset
    verdicts: Sequence[Mapping[str, Any]]
    legend: Sequence[Sequence[str | None]]
    rejected: Sequence[Mapping[str, Any]] = ()
    warnings: Sequence[Mapping[str, Any]] = ()
    site: Site | None = None
    job_id: int | None = None
    next_cursor: str | None = None
    limit: int | None = None


def compact_answer(verdicts: Sequence[CompactVerdict], **envelope: Any) -> CompactAnswer:
    """Compact verdicts with each (check, unit, basis id) written once in a legend (engine.compact)."""
    encoded = encode(verdicts)
    return CompactAnswer(verdicts=encoded["verdicts"], legend=encoded["legend"], **envelope)


@dataclass(frozen=True, slots=True, kw_only=True)
class ReadingsAnswer:
    """A readings post: what was merged, what was rejected, the upload, the touched verdicts."""

    accepted: int
    rejected: Sequence[Mapping[str, Any]]
    upload: Upload
    verdicts: Sequence[Verdict]
    warnings: Sequence[Mapping[str, Any]] = ()
    duplicate_of: int | None = None
    facts: Sequence[str] = ()  # the installation and boards whose facts this post changed


@dataclass(frozen=True, slots=True, kw_only=True)
class CircuitState:
    """A stored circuit: its merged record, the caller's id for it, and (when asked) its history."""

    board: str
    circuit: str
    external_ref: str | None
    record: CircuitRecord
    updated_at: datetime
    upload_id: int | None
    history: Mapping[str, Any] | None = None


def circuit_state(row: Circuit, record: CircuitRecord,
                  history: Mapping[str, Any] | None = None) -> CircuitState:
    return CircuitState(board=row.board, circuit=row.circuit, external_ref=row.external_ref, record=record,
                        updated_at=row.updated_at, upload_id=row.upload_id, history=history)


@dataclass(frozen=True, slots=True, kw_only=True)
class FactsState:
    """The installation's or one board's facts as stored (``fields`` None: never recorded)."""

    job_id: int
    scope: str  # installation | board
    board: str | None
    fields: Mapping[str, Any] | None
    updated_at: datetime | None
    upload_id: int | None
    history: Mapping[str, Any] | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class FactsAnswer:
    """A PUT of facts: the new state, the upload that keeps the body, the circuits whose outcome changed."""

    state: FactsState
    upload: Upload
    changed: Sequence[Mapping[str, Any]]
    warnings: Sequence[Mapping[str, Any]] = ()


_VERIFY_SCHEMA = VerifyResponseSchema()


def verify_body(ruleset: Ruleset, verdicts: Sequence[Verdict], rejected: Sequence[Mapping[str, Any]],
                warnings: Sequence[Mapping[str, Any]] = (), *, site: Site | None = None) -> dict[str, Any]:
    """The verify answer's JSON document (as ``POST /v1/verify`` answers it)."""
    body: dict[str, Any] = _VERIFY_SCHEMA.dump(VerifyAnswer(ruleset=ruleset, verdicts=verdicts,
                                                            rejected=rejected, warnings=warnings, site=site))
    return body


_COMPACT_SCHEMA = CompactVerifyResponseSchema()


def compact_body(ruleset: Ruleset, verdicts: Sequence[CompactVerdict], rejected: Sequence[Mapping[str, Any]],
                 warnings: Sequence[Mapping[str, Any]] = (), *, site: Site | None = None) -> dict[str, Any]:
    """The compact verify answer's JSON document (as ``POST /v1/verify?view=compact`` answers it)."""
    body: dict[str, Any] = _COMPACT_SCHEMA.dump(compact_answer(verdicts, ruleset=ruleset, rejected=rejected,
                                                               warnings=warnings, site=site))
    return body
