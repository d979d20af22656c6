"""``OHMTALLY_ENCRYPTION_KEY``: the server key(s) that keep webhook signing secrets encrypted at rest.

Invariants:
- The setting is one or more Fernet keys (32 bytes, URL-safe base64, 44
  characters), separated by commas. The first one encrypts; every one
  decrypts, so the server key itself can be rotated (new key first, old key
  after it, until every stored secret has been re-encrypted).
- A key that does not decode to exactly 32 bytes, or whose 32 bytes take
  fewer than :data:`MIN_DISTINCT_BYTES` distinct values (zeros, a repeated
  pattern, base64 of typed text), is refused when the settings load, so a
  server never starts on a weak key. 32 random bytes take fewer than 16
  distinct values with a probability of about 3 × 10⁻¹⁷ (derived from the
  occupancy distribution of 32 draws from 256 values), so a generated key is
  never refused.
- :class:`ServerKeys` never shows the keys in its ``repr`` (settings get logged).
- Standard library only: :mod:`api.settings` imports this module, and
  ``ohmtally verify`` should not pay for the cryptography package.
"""

from __future__ import annotations

import base64
import binascii
from dataclasses import dataclass, field

__all__ = ["KEY_BYTES", "MIN_DISTINCT_BYTES", "ServerKeys", "check_server_key", "parse_server_keys"]

KEY_BYTES = 32  # a Fernet key: 16 bytes for HMAC-SHA256, 16 for AES-128 (the Fernet specification)
MIN_DISTINCT_BYTES = 16
_HOW = ("make one with: python -c 'from cryptography.fernet import Fernet; "
        "print(Fernet.generate_key().decode())'")


@dataclass(frozen=True, slots=True)
class ServerKeys:
    """The configured keys as text, first the one that encrypts; shown redacted."""

    keys: tuple[str, ...] = field(repr=False)

    def __repr__(self) -> str:
        return f"ServerKeys(<{len(self.keys)} key(s) redacted>)"


def check_server_key(text: str) -> bytes:
    """The 32 bytes of one key; :class:`ValueError` saying what is wrong (never echoing the key)."""
    try:
        raw = base64.b64decode(text.encode("ascii"), altchars=b"-_", validate=True)
    except (binascii.Error, UnicodeEncodeError, ValueError):
        raise ValueError(f"is not URL-safe base64; {_HOW}") from None
    if len(raw) != KEY_BYTES:
        raise ValueError(f"must decode to {KEY_BYTES} bytes, not {len(raw)}; {_HOW}")
    if len(set(raw)) < MIN_DISTINCT_BYTES:
        raise ValueError(f"is not random (its {KEY_BYTES} bytes take only {len(set(raw))} distinct "
                         f"values); {_HOW}")
    return raw


def parse_server_keys(text: str) -> ServerKeys | None:
    """The setting's keys, or ``None`` when it is empty; :class:`ValueError` for a bad one."""
    parts = [part.strip() for part in text.split(",")]
    if not any(parts):
        return None
    for number, part in enumerate(parts, start=1):
        if not part:
            raise ValueError(f"has an empty key (number {number}); separate keys with one comma")
        try:
            check_server_key(part)
        except ValueError as exc:
            raise ValueError(f"key number {number} {exc}") from None
    if len(set(parts)) != len(parts):
        raise ValueError("lists the same key twice")
    return ServerKeys(tuple(parts))
