"""Settings every host serving one database must share, checked when ``ohmtally serve`` starts.

Invariants:
- Each host records a fingerprint of each shared setting in ``deployment_facts``
  (``agree.<name>``, with who recorded it and when); a later start compares its own
  with the one recorded, then records its own. Fingerprints are hashes: no key,
  profile or path is stored.
- ``encryption_keys`` (``OHMTALLY_ENCRYPTION_KEY``) **refuses** to start a host
  that cannot decrypt what the recorded host encrypts: the recorded encrypting key
  must be among this host's keys (so a rotation, new key added everywhere first,
  passes). A host without keys where another recorded one is refused too. Its
  fingerprint is a hash of each key; the database already holds secrets sealed
  under those keys, so the hash tells an attacker nothing the database did not.
- ``profiles`` (the files of ``OHMTALLY_PROFILE_DIR``), ``adapters`` (the
  ``ohmtally.adapters`` plug-ins and their versions) and ``rulesets`` (every
  built-in ruleset's content) **warn**: they change answers by which host answers,
  but they also differ, briefly and rightly, while a rolling deploy replaces a
  version; each differing start logs a warning naming the component and the host
  that recorded the other value.
- Runs in ``serve`` only (and in the tests that call it), never per request.
"""

from __future__ import annotations

import hashlib
import logging
import socket
from collections.abc import Iterable
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path
from typing import Any

from flask import Flask
from sqlalchemy import Engine, insert, select, update
from sqlalchemy.exc import IntegrityError

from api.db.models import utcnow
from api.db.schema import DEPLOYMENT_FACTS
from api.db.session import close_engines
from api.http.json_provider import dumps_bytes
from engine import __version__, builtin_ruleset_ids, load_ruleset

__all__ = ["Disagreement", "HostsDisagree", "check_agreement", "fingerprints", "key_fingerprints"]

log = logging.getLogger("ohmtally.api")
_PREFIX = "agree."
_ADAPTER_GROUP = "ohmtally.adapters"


class HostsDisagree(RuntimeError):
    """This host cannot serve the database beside the hosts that recorded their settings."""


@dataclass(frozen=True, slots=True)
class Disagreement:
    """A shared setting that differs from the one recorded (a warning, not a refusal)."""

    name: str
    recorded_by: str | None
    recorded_at: Any


def _digest(parts: Iterable[bytes]) -> str:
    hashed = hashlib.sha256()
    for part in parts:
        hashed.update(len(part).to_bytes(8, "big") + part)  # length-prefixed: no two lists collide
    return hashed.hexdigest()[:32]


def key_fingerprints(keys: Iterable[str]) -> list[str]:
    """A short hash of each key, in the setting's order (the first encrypts)."""
    return [hashlib.sha256(b"ohmtally key check\0" + key.encode()).hexdigest()[:16] for key in keys]


def _profiles(directory: str | None) -> str:
    if not directory or not Path(directory).is_dir():
        return _digest([])
    files = sorted(Path(directory).glob("*.json"))
    return _digest(part for path in files for part in (path.name.encode(), path.read_bytes()))


def _adapters() -> str:
    found = []
    for entry in metadata.entry_points(group=_ADAPTER_GROUP):
        dist = getattr(entry, "dist", None)
        version = dist.version if dist is not None else "?"
        found.append(f"{entry.name}={entry.value} {version}".encode())
    return _digest(sorted(found))


def _rulesets() -> str:
    return _digest(ruleset_id.encode() + b"\0" + dumps_bytes(load_ruleset(ruleset_id).as_dict())
                   for ruleset_id in builtin_ruleset_ids())


def fingerprints(settings: Any) -> dict[str, str]:
    """The warned-about settings' fingerprints on this host (see the module's invariants)."""
    return {"profiles": _profiles(settings.profile_dir), "adapters": _adapters(), "rulesets": _rulesets()}


def _host() -> str:
    return f"{socket.gethostname()[:120]} (ohmtally {__version__})"


def _record(engine: Engine, name: str, value: str) -> tuple[str, str | None, Any] | None:
    """Record ``value`` under ``agree.<name>``; the row it replaced (value, by, at), if any."""
    key = _PREFIX + name
    row = {"value": value, "recorded_by": _host(), "recorded_at": utcnow()}
    with engine.begin() as connection:
        before = connection.execute(select(DEPLOYMENT_FACTS.c.value, DEPLOYMENT_FACTS.c.recorded_by,
                                           DEPLOYMENT_FACTS.c.recorded_at)
                                    .where(DEPLOYMENT_FACTS.c.name == key)).first()
        if before is not None:
            connection.execute(update(DEPLOYMENT_FACTS).where(DEPLOYMENT_FACTS.c.name == key).values(**row))
            return before[0], before[1], before[2]
    try:
        with engine.begin() as connection:
            connection.execute(insert(DEPLOYMENT_FACTS).values(name=key, **row))
    except IntegrityError:  # another host recorded it first, in the same instant: theirs stands
        pass
    return None


def _recorded(engine: Engine, name: str) -> tuple[str, str | None, Any] | None:
    with engine.connect() as connection:
        found = connection.execute(select(DEPLOYMENT_FACTS.c.value, DEPLOYMENT_FACTS.c.recorded_by,
                                          DEPLOYMENT_FACTS.c.recorded_at)
                                   .where(DEPLOYMENT_FACTS.c.name == _PREFIX + name)).first()
    return None if found is None else (found[0], found[1], found[2])


def _check_keys(engine: Engine, settings: Any) -> None:
    configured = getattr(settings, "encryption_keys", None)
    ours = key_fingerprints(configured.keys) if configured is not None else []
    recorded = _recorded(engine, "encryption_keys")
    if recorded is not None and recorded[0] not in ours:
        by = recorded[1] or "another host"
        raise HostsDisagree(
            f"OHMTALLY_ENCRYPTION_KEY: {by} encrypts webhook secrets with a key this host does not "
            f"have ({'it has none' if not ours else 'none of its keys match'}), so it could not "
            "sign that host's deliveries; give every host the same keys (during a rotation the new "
            "key is added to every host, after the old one, before any host puts it first)")
    if ours:
        _record(engine, "encryption_keys", ours[0])


def check_agreement(app: Flask, *, close: bool = False) -> list[Disagreement]:
    """Refuse (:class:`HostsDisagree`) or warn about settings that differ between hosts; record ours.

    ``close``: dispose of the app's connections afterwards (``serve`` checks in the process
    that forks the workers, which must not inherit open database connections).
    """
    engine: Engine = app.extensions["ohmtally.engine"]
    try:
        return _check(engine, app.extensions["ohmtally.settings"])
    finally:
        if close:
            close_engines(app)


def _check(engine: Engine, settings: Any) -> list[Disagreement]:
    _check_keys(engine, settings)
    warnings: list[Disagreement] = []
    for name, value in fingerprints(settings).items():
        before = _record(engine, name, value)
        if before is not None and before[0] != value:
            warnings.append(Disagreement(name, before[1], before[2]))
            log.warning(f"this host's {name} differ from those {before[1] or 'another host'} recorded: "
                        "answers may depend on which host serves a request (expected only while a "
                        "rolling deploy replaces a version)",
                        extra={"component": name, "recorded_by": before[1],
                               "recorded_at": str(before[2])})
    return warnings
