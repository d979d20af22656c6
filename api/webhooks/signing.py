"""The signature a delivery carries, and how a receiver checks it.

Invariants:
- ``Ohmtally-Signature: t=<unix seconds>,v1=<hex>`` where ``<hex>`` is
  HMAC-SHA256 (RFC 2104, FIPS 180-4) keyed with the subscription's secret
  (its UTF-8 bytes) over ``b"<t>." + body``: the timestamp is signed with
  the body, so a captured delivery cannot be replayed later with a new ``t``.
- A receiver refuses a delivery whose ``t`` is more than
  :data:`REPLAY_WINDOW_S` seconds from its own clock, and compares digests in
  constant time (:func:`hmac.compare_digest`).
- Every attempt is signed afresh (new ``t``); the body and the event id stay
  the same, so a receiver de-duplicates on ``Ohmtally-Event-Id``.
"""

from __future__ import annotations

import hashlib
import hmac
import secrets

__all__ = [
    "DELIVERY_HEADER",
    "EVENT_HEADER",
    "EVENT_ID_HEADER",
    "REPLAY_WINDOW_S",
    "SIGNATURE_HEADER",
    "new_secret",
    "sign",
    "signature_header",
    "verify_signature",
]

SIGNATURE_HEADER = "Ohmtally-Signature"
EVENT_ID_HEADER = "Ohmtally-Event-Id"
EVENT_HEADER = "Ohmtally-Event"
DELIVERY_HEADER = "Ohmtally-Delivery"
# Five minutes either way: room for clock drift and a slow network, short enough
# that a captured request is soon useless (our choice; documented in README.md, "Integrating").
REPLAY_WINDOW_S = 300


def new_secret() -> str:
    """A fresh signing secret: 32 random bytes, URL-safe base64 (43 characters)."""
    return secrets.token_urlsafe(32)


def sign(secret: str, timestamp: int, body: bytes) -> str:
    message = str(timestamp).encode("ascii") + b"." + body
    return hmac.new(secret.encode("utf-8"), message, hashlib.sha256).hexdigest()


def signature_header(secret: str, timestamp: int, body: bytes) -> str:
    return f"t={timestamp},v1={sign(secret, timestamp, body)}"


def verify_signature(secret: str, header: str, body: bytes, *, now: float,
                     window_s: int = REPLAY_WINDOW_S) -> bool:
    """The receiver's check (README.md, "Checking the signature"): fresh ``t``, matching ``v1``."""
    fields = dict(part.split("=", 1) for part in header.split(",") if "=" in part)
    try:
        timestamp = int(fields["t"])
    except (KeyError, ValueError):
        return False
    if abs(now - timestamp) > window_s:
        return False
    return hmac.compare_digest(sign(secret, timestamp, body), fields.get("v1", ""))
