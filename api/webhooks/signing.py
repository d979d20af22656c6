"""Delivery signatures by the Standard Webhooks specification, and the secrets they use.

Invariants:
- Every delivery carries ``webhook-id`` (the event id: the same on every attempt,
  the receiver's de-duplication key), ``webhook-timestamp`` (unix seconds of this
  attempt, from the database clock) and ``webhook-signature``: ``v1,<base64>``
  where ``<base64>`` is the standard base64 of HMAC-SHA256 (RFC 2104, FIPS 180-4)
  keyed with the secret's bytes over ``b"<webhook-id>.<webhook-timestamp>." + body``.
  While more than one secret is valid (a rotation's overlap) the header holds one
  ``v1,…`` per secret, newest first, separated by single spaces; a receiver
  accepts the delivery when any one of them matches.
- A secret is shown to people as ``whsec_`` + the standard base64 of its bytes
  (the specification's serialisation), so any published Standard Webhooks
  library verifies our deliveries unchanged.
- Generated secrets are 32 bytes from :mod:`secrets`. A secret a client brings
  must decode to 24–64 bytes (the specification's range for symmetric keys) and
  its bytes must take at least :data:`MIN_DISTINCT_BYTES` distinct values: 24
  random bytes fail that with a probability of about 3 × 10⁻⁸ (derived from the
  occupancy distribution of 24 draws from 256 values), while repeated or typed
  text (``aaaa…``, a pass phrase) fails it. It refuses patterns; it does not prove
  randomness, so generated secrets are the advice.
- ``webhook-id`` and ``webhook-timestamp`` are never client-controlled (a UUID and
  an integer), so neither can contain the ``.`` the signed content is split on.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import hmac
import secrets
from collections.abc import Iterable

__all__ = [
    "EVENT_TYPE_HEADER",
    "ID_HEADER",
    "MAX_SECRET_BYTES",
    "MIN_DISTINCT_BYTES",
    "MIN_SECRET_BYTES",
    "SECRET_PATTERN",
    "SECRET_PREFIX",
    "SIGNATURE_HEADER",
    "TIMESTAMP_HEADER",
    "WeakSecret",
    "format_secret",
    "new_secret",
    "parse_secret",
    "sign",
    "signature_header",
    "signed_headers",
]

ID_HEADER = "webhook-id"
TIMESTAMP_HEADER = "webhook-timestamp"
SIGNATURE_HEADER = "webhook-signature"
# Our own header: the event type, also in the body's "type", for receivers that route
# before they parse. Not part of the signature scheme.
EVENT_TYPE_HEADER = "Ohmtally-Event-Type"

SECRET_PREFIX = "whsec_"
GENERATED_SECRET_BYTES = 32
MIN_SECRET_BYTES = 24
MAX_SECRET_BYTES = 64
MIN_DISTINCT_BYTES = 16
# whsec_ and base64 of 24–64 bytes: 32–88 characters with padding, 32–86 without.
SECRET_PATTERN = r"^whsec_[A-Za-z0-9+/]{32,88}={0,2}$"


class WeakSecret(ValueError):
    """A client's secret that is malformed or too weak; ``code`` is stable for problem bodies."""

    def __init__(self, code: str, reason: str) -> None:
        super().__init__(reason)
        self.code = code
        self.reason = reason


def new_secret() -> bytes:
    return secrets.token_bytes(GENERATED_SECRET_BYTES)


def format_secret(key: bytes) -> str:
    return SECRET_PREFIX + base64.b64encode(key).decode("ascii")


def parse_secret(text: str) -> bytes:
    """The bytes of a ``whsec_…`` secret a client sent, or :class:`WeakSecret` saying why not."""
    if not text.startswith(SECRET_PREFIX):
        raise WeakSecret("bad_secret", f"a secret is {SECRET_PREFIX} followed by the base64 of "
                         f"{MIN_SECRET_BYTES}–{MAX_SECRET_BYTES} random bytes")
    encoded = text[len(SECRET_PREFIX):]
    try:
        key = base64.b64decode(encoded + "=" * (-len(encoded) % 4), validate=True)
    except (binascii.Error, ValueError):
        raise WeakSecret("bad_secret", f"the part after {SECRET_PREFIX} is not standard base64") from None
    if not MIN_SECRET_BYTES <= len(key) <= MAX_SECRET_BYTES:
        raise WeakSecret("weak_secret", f"the secret decodes to {len(key)} bytes; use "
                         f"{MIN_SECRET_BYTES}–{MAX_SECRET_BYTES} random bytes (or let the server make one)")
    if len(set(key)) < MIN_DISTINCT_BYTES:
        raise WeakSecret("weak_secret", f"the secret's bytes take only {len(set(key))} distinct values, "
                         "so it is not random; leave `secret` out and the server makes one")
    return key


def sign(key: bytes, message_id: str, timestamp: int, body: bytes) -> str:
    """One ``v1,<base64>`` signature."""
    content = f"{message_id}.{timestamp}.".encode("ascii") + body
    digest = hmac.new(key, content, hashlib.sha256).digest()
    return "v1," + base64.b64encode(digest).decode("ascii")


def signature_header(keys: Iterable[bytes], message_id: str, timestamp: int, body: bytes) -> str:
    """The ``webhook-signature`` value: one signature per valid secret, space-separated."""
    return " ".join(sign(key, message_id, timestamp, body) for key in keys)


def signed_headers(keys: Iterable[bytes], message_id: str, timestamp: int, body: bytes) -> dict[str, str]:
    """The three Standard Webhooks headers of one attempt."""
    return {ID_HEADER: message_id, TIMESTAMP_HEADER: str(timestamp),
            SIGNATURE_HEADER: signature_header(keys, message_id, timestamp, body)}
