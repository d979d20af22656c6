"""Webhook signing secrets sealed with the server key, and where that key comes from.

Invariants:
- A signing secret is stored only as :meth:`SecretBox.seal` made it: a Fernet
  token (AES-128-CBC, then HMAC-SHA256 over the whole token; the
  ``cryptography`` package) of ``b"<subscription id>:" + secret``. The
  database never holds a secret in the clear, so a dump of it alone yields
  nothing a receiver would accept.
- :meth:`SecretBox.open` checks that prefix: a token copied onto another
  subscription's row does not open there, so whoever can write to the
  database still cannot lend one organisation's secret to another.
- The key (:func:`load_box`): ``OHMTALLY_ENCRYPTION_KEY`` when set (checked when
  the settings load, :mod:`api.webhooks.server_key`). Unset with
  ``OHMTALLY_AUTH=off`` (a demo or a test on one loopback host): a key
  generated once into ``<instance folder>/webhook-secrets.key``, mode 0600,
  written to a temporary file and hard-linked into place so that workers
  starting together agree on one key. Unset with auth on: no box (``None``);
  the API answers 503 ``secret_key_missing`` where a secret is needed,
  because several hosts would each invent a key of their own. Never plain text.
- A key file that is malformed or readable by others is refused, never used.
"""

from __future__ import annotations

import os
import stat
import tempfile
from collections.abc import Sequence
from pathlib import Path

from cryptography.fernet import Fernet, InvalidToken, MultiFernet
from flask import Flask

from api.settings import Settings, SettingsError
from api.webhooks.server_key import check_server_key

__all__ = ["KEY_FILE", "SecretBox", "SecretUnreadable", "ServerKeyFileError", "box_for_app", "load_box"]

KEY_FILE = "webhook-secrets.key"
_APP_KEY = "ohmtally.webhooks.box"


class SecretUnreadable(Exception):
    """A sealed secret this server's keys cannot open (another server key, or another row's token)."""


class ServerKeyFileError(SettingsError):
    """The generated key file exists but cannot be used."""


class SecretBox:
    """Seals and opens signing secrets with the server key(s); the first key seals."""

    def __init__(self, keys: Sequence[str]) -> None:
        if not keys:
            raise ValueError("a SecretBox needs at least one key")
        self._fernet = MultiFernet([Fernet(key) for key in keys])

    def __repr__(self) -> str:
        return "SecretBox(<keys redacted>)"

    def seal(self, subscription_id: int, secret: bytes) -> str:
        return self._fernet.encrypt(_prefix(subscription_id) + secret).decode("ascii")

    def open(self, subscription_id: int, sealed: str) -> bytes:
        try:
            plain = self._fernet.decrypt(sealed.encode("ascii"))
        except (InvalidToken, UnicodeEncodeError):
            raise SecretUnreadable("the server key cannot open this secret (was OHMTALLY_ENCRYPTION_KEY "
                                   "changed without keeping the old key after the new one?)") from None
        prefix = _prefix(subscription_id)
        if not plain.startswith(prefix):
            raise SecretUnreadable("this secret was sealed for another subscription")
        return plain[len(prefix):]

    def reseal(self, sealed: str) -> str:
        """The same secret sealed with the first key (after the server key was rotated)."""
        return self._fernet.rotate(sealed.encode("ascii")).decode("ascii")


def _prefix(subscription_id: int) -> bytes:
    return f"{subscription_id}:".encode("ascii")


def _generated_key(folder: str) -> str:
    """The key in ``folder/KEY_FILE``, made now if there is none (first writer wins)."""
    path = Path(folder) / KEY_FILE
    if not path.exists():
        Path(folder).mkdir(parents=True, exist_ok=True)
        fd, temporary = tempfile.mkstemp(dir=folder, prefix=".webhook-secrets.", suffix=".tmp")  # 0600
        try:
            os.write(fd, Fernet.generate_key() + b"\n")
            os.fsync(fd)
        finally:
            os.close(fd)
        try:
            os.link(temporary, path)
        except FileExistsError:
            pass  # another worker made it first: everyone uses that one
        finally:
            os.unlink(temporary)
    if os.name == "posix" and stat.S_IMODE(path.stat().st_mode) & 0o077:
        raise ServerKeyFileError(f"{path} may be read by other users: chmod 600 it (it holds the key "
                                 "that webhook secrets are encrypted with)")
    text = path.read_text(encoding="ascii", errors="replace").strip()
    try:
        check_server_key(text)
    except ValueError as exc:
        raise ServerKeyFileError(f"the key in {path} {exc}") from None
    return text


def load_box(settings: Settings, instance_path: str) -> SecretBox | None:
    """The server's box (see the module's invariants); ``None`` with auth on and no key set."""
    if settings.encryption_keys is not None:
        return SecretBox(settings.encryption_keys.keys)
    if settings.auth:
        return None
    return SecretBox([_generated_key(instance_path)])


def box_for_app(app: Flask) -> SecretBox | None:
    """:func:`load_box` for this app, worked out once and kept with it."""
    if _APP_KEY not in app.extensions:
        app.extensions[_APP_KEY] = load_box(app.extensions["ohmtally.settings"], app.instance_path)
    box: SecretBox | None = app.extensions[_APP_KEY]
    return box
