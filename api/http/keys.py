"""API keys: make one (shown once), hash it, parse scopes and expiry, find one by its secret.

Invariants:
- A key is ``oht_`` + ``secrets.token_urlsafe(32)``: 32 random bytes, 256 bits
  from the OS's CSPRNG. The ``oht_`` prefix lets secret scanners and people
  recognise a leaked ohmtally key; it adds no entropy and none is claimed.
- Only ``sha256(secret)`` is stored. A slow password hash (bcrypt, scrypt,
  argon2) exists to make guessing *low-entropy* human passwords expensive; a
  256-bit random key cannot be guessed, so a fast, unsalted hash loses
  nothing and lets the look-up be one indexed equality query per request.
  A database dump therefore yields no usable key.
- :func:`find_key` looks the hash up and then compares it again with
  :func:`hmac.compare_digest`, so no comparison in our code depends on how
  many leading characters matched.
- Nothing here logs or returns the secret except :func:`create_key`'s result,
  which the caller shows once.
- An organisation is identified by its slug, chosen once when it is made (given, or
  derived from its name) and never derived again: :func:`organisation_named` finds an
  organisation by its exact slug, or by the exact name it was made with, and refuses a
  name that differs from an existing organisation's only in case or punctuation ("ACME
  Ltd" beside "Acme, Ltd.") instead of silently making both one tenant.
"""

from __future__ import annotations

import hashlib
import hmac
import re
import secrets
from dataclasses import dataclass
from datetime import datetime, timedelta

from sqlalchemy import select
from sqlalchemy.orm import Session

from api.db.models import SCOPES, ApiKey, Organisation, utcnow

__all__ = [
    "KEY_PREFIX",
    "SLUG_PATTERN",
    "CreatedKey",
    "KeySpecError",
    "create_key",
    "find_key",
    "hash_secret",
    "organisation_named",
    "parse_expiry",
    "parse_scopes",
    "slugify",
]

SLUG_PATTERN = re.compile(r"^[a-z0-9](?:[a-z0-9-]{0,62}[a-z0-9])?$")

KEY_PREFIX = "oht_"
_TOKEN_BYTES = 32  # 256 bits; the brief asks for at least 128
_DISPLAY_CHARS = 8  # "oht_" + 8 characters of the token: enough to tell keys apart in a list
_SECRET = re.compile(r"^oht_[A-Za-z0-9_-]{20,100}$")
_EXPIRY = re.compile(r"^(\d{1,5})([hdw])$")
_SLUG = re.compile(r"[^a-z0-9]+")


class KeySpecError(ValueError):
    """A scope list, expiry or organisation name that cannot be used."""


@dataclass(frozen=True, slots=True)
class CreatedKey:
    key: ApiKey
    secret: str  # shown once; never stored


def hash_secret(secret: str) -> str:
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def parse_scopes(text: str) -> str:
    """``"read,write"`` → the canonical, ordered, comma-separated list; unknown scopes refused."""
    wanted = {s.strip().lower() for s in text.split(",") if s.strip()}
    unknown = sorted(wanted - set(SCOPES))
    if unknown or not wanted:
        raise KeySpecError(f"scopes must be a comma-separated list of {', '.join(SCOPES)}"
                        + (f"; unknown: {', '.join(unknown)}" if unknown else ""))
    return ",".join(s for s in SCOPES if s in wanted)


def parse_expiry(text: str | None, now: datetime) -> datetime | None:
    """``30d``, ``12h``, ``2w`` → the moment the key stops working; ``None``/``never`` → no expiry."""
    if text is None or text.strip().lower() in ("", "never"):
        return None
    found = _EXPIRY.match(text.strip().lower())
    if not found or int(found.group(1)) == 0:
        raise KeySpecError(f"--expires must look like 12h, 30d or 2w (or 'never'), not {text!r}")
    unit = {"h": "hours", "d": "days", "w": "weeks"}[found.group(2)]
    return now + timedelta(**{unit: int(found.group(1))})


def slugify(name: str) -> str:
    slug = _SLUG.sub("-", name.strip().lower()).strip("-")[:64].rstrip("-")
    if not slug:
        raise KeySpecError(f"an organisation needs a name with letters or digits, not {name!r}")
    return slug


def _by_slug(session: Session, slug: str) -> Organisation | None:
    return session.scalars(select(Organisation).where(Organisation.slug == slug)).first()


def organisation_named(session: Session, name: str, *, create: bool,
                       slug: str | None = None) -> Organisation | None:
    """The organisation whose slug is ``name``, or which was made with exactly this ``name``;
    with ``create``, a new one (slug ``slug`` if given, else derived from ``name``).

    ``KeySpecError`` for a name that would collide with another organisation's (equal once case
    and punctuation are set aside, or the same slug), and for a given slug that is taken or malformed.
    """
    text = name.strip()
    found = _by_slug(session, text)
    if found is not None and slug in (None, found.slug):
        return found
    others = list(session.scalars(select(Organisation).order_by(Organisation.id)))
    for other in others:
        if other.name == text and slug in (None, other.slug):
            return other  # the name it was made with, spelt the same
    if slug is not None and not SLUG_PATTERN.match(slug):
        raise KeySpecError(f"an organisation slug is 1-64 of a-z, 0-9 and '-' (not at either end), "
                           f"not {slug!r}")
    wanted = slug if slug is not None else slugify(text)
    normal = _SLUG.sub("", text.lower())
    for other in others:
        if other.slug == wanted or (normal and _SLUG.sub("", other.name.lower()) == normal):
            raise KeySpecError(f"{text!r} would collide with organisation {other.slug!r}, which exists as "
                               f"{other.name!r}: use --org {other.slug} to add a key to it, or choose "
                               "another name or slug (--org-slug)")
    if not create:
        return None
    org = Organisation(slug=wanted, name=text[:200], created_at=utcnow())
    session.add(org)
    session.flush()
    return org


def create_key(session: Session, organisation: Organisation, *, name: str, scopes: str,
               expires_at: datetime | None) -> CreatedKey:
    secret = KEY_PREFIX + secrets.token_urlsafe(_TOKEN_BYTES)
    key = ApiKey(organisation_id=organisation.id, name=name[:200],
                 prefix=secret[:len(KEY_PREFIX) + _DISPLAY_CHARS],
                 key_hash=hash_secret(secret), scopes=parse_scopes(scopes), created_at=utcnow(),
                 expires_at=expires_at)
    session.add(key)
    session.flush()
    return CreatedKey(key=key, secret=secret)


def find_key(session: Session, secret: str) -> ApiKey | None:
    """The key whose hash matches ``secret`` (usable or not), or ``None``; never raises on junk."""
    if not _SECRET.match(secret):
        return None
    wanted = hash_secret(secret)
    key = session.scalars(select(ApiKey).where(ApiKey.key_hash == wanted)).first()
    if key is None or not hmac.compare_digest(key.key_hash.encode(), wanted.encode()):
        return None
    return key
