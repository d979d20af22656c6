"""Tables for API keys and organisation-scoped Idempotency-Key records (migration 0003).

Invariants:
- Declared on :class:`api.db.models.base.Base`, so the one metadata holds every table
  and the models-match-migrations test covers these too.
- ``ApiKey.key_hash`` is the SHA-256 hex digest of the whole secret; the
  secret itself is never stored. ``prefix`` is only for people to tell keys
  apart in ``keys list``; it is not secret and not enough to authenticate.
- ``IdempotencyRecord`` is unique per ``(organisation_id, idempotency_key)``;
  a row with ``status_code`` null was reserved by a request whose answer was
  never recorded (it is refused as "in doubt", never replayed as empty).
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import ForeignKey, LargeBinary, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from api.db.models.base import Base, UtcDateTime, utcnow
from api.db.models.jobs import Organisation

__all__ = ["SCOPES", "ApiKey", "IdempotencyRecord"]

SCOPES: tuple[str, ...] = ("read", "write", "admin")


class ApiKey(Base):
    __tablename__ = "api_keys"
    __table_args__ = (UniqueConstraint("key_hash", name="uq_api_keys_key_hash"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    organisation_id: Mapped[int] = mapped_column(ForeignKey("organisations.id"), index=True)
    name: Mapped[str] = mapped_column(String(200))
    prefix: Mapped[str] = mapped_column(String(16))
    key_hash: Mapped[str] = mapped_column(String(64))
    scopes: Mapped[str] = mapped_column(String(100))  # "read,write"
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
    expires_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)
    revoked_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)
    last_used_at: Mapped[datetime | None] = mapped_column(UtcDateTime(), default=None)

    organisation: Mapped[Organisation] = relationship()

    @property
    def scope_set(self) -> frozenset[str]:
        return frozenset(s for s in self.scopes.split(",") if s)

    def usable_at(self, now: datetime) -> bool:
        """Not revoked and not expired at ``now``."""
        return self.revoked_at is None and (self.expires_at is None or now < self.expires_at)


class IdempotencyRecord(Base):
    __tablename__ = "idempotency_records"
    __table_args__ = (UniqueConstraint("organisation_id", "idempotency_key", name="uq_idempotency_org_key"),)

    id: Mapped[int] = mapped_column(primary_key=True)
    organisation_id: Mapped[int] = mapped_column(ForeignKey("organisations.id"))
    idempotency_key: Mapped[str] = mapped_column(String(200))
    method: Mapped[str] = mapped_column(String(10))
    path: Mapped[str] = mapped_column(String(2000))
    request_sha256: Mapped[str] = mapped_column(String(64))
    status_code: Mapped[int | None] = mapped_column(default=None)
    content_type: Mapped[str | None] = mapped_column(String(200), default=None)
    location: Mapped[str | None] = mapped_column(String(2000), default=None)
    response_body: Mapped[bytes | None] = mapped_column(LargeBinary, default=None)
    created_at: Mapped[datetime] = mapped_column(UtcDateTime(), default=utcnow)
