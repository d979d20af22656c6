"""Test helpers: API keys issued straight into an app's database, and the header that carries them."""

from __future__ import annotations

import uuid
from datetime import datetime

from flask import Flask

from api.http.keys import create_key, organisation_named

__all__ = ["bearer", "issue_key", "unique_org"]


def unique_org(label: str = "firm") -> str:
    """An organisation name no other test uses (PostgreSQL tests share one schema per run)."""
    return f"{label} {uuid.uuid4().hex[:8]}"


def issue_key(app: Flask, org: str, scopes: str = "read,write",
              expires_at: datetime | None = None) -> tuple[int, str]:
    """(key id, secret) of a new key for ``org`` (created if new)."""
    with app.app_context():
        session = app.extensions["ohmtally.db"]()
        try:
            organisation = organisation_named(session, org, create=True)
            assert organisation is not None
            made = create_key(session, organisation, name="test", scopes=scopes, expires_at=expires_at)
            session.commit()
            return made.key.id, made.secret
        finally:
            session.close()


def bearer(secret: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {secret}"}
