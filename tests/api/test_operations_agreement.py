"""Settings hosts must share: the encryption keys refuse a host that could not read the others'
secrets; profiles, plug-in adapters and rulesets warn when they differ from what another host recorded.

Keys are made with cryptography's Fernet.generate_key, as the setting's documentation says to.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from cryptography.fernet import Fernet
from flask import Flask
from sqlalchemy import create_engine, delete, select

from api.db.schema import DEPLOYMENT_FACTS
from api.ops.agreement import HostsDisagree, check_agreement, key_fingerprints
from api.settings import load_settings

pytestmark = pytest.mark.postgres
needs_keys = pytest.mark.skipif(not hasattr(load_settings({}, environ={}), "encryption_keys"),
                                reason="OHMTALLY_ENCRYPTION_KEY is not a setting of this build yet")


@pytest.fixture(autouse=True)
def _no_recorded_settings(db_url: str) -> None:
    """PostgreSQL tests share one schema per run: start each test with nothing recorded."""
    engine = create_engine(db_url)
    with engine.begin() as connection:
        connection.execute(delete(DEPLOYMENT_FACTS).where(DEPLOYMENT_FACTS.c.name.like("agree.%")))
    engine.dispose()


def _key() -> str:
    return Fernet.generate_key().decode()


def _facts(app: Flask) -> dict[str, str]:
    with app.extensions["ohmtally.engine"].connect() as connection:
        return {name: value for name, value in connection.execute(
            select(DEPLOYMENT_FACTS.c.name, DEPLOYMENT_FACTS.c.value)) if name.startswith("agree.")}


def test_the_same_settings_agree_and_are_recorded(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """Two starts with the same settings: no warning; the fingerprints are recorded, as hashes."""
    first = app_factory(db_url)
    assert check_agreement(first) == []
    assert check_agreement(app_factory(db_url)) == []
    facts = _facts(first)
    assert set(facts) >= {"agree.profiles", "agree.adapters", "agree.rulesets"}
    assert all(len(value) == 32 and int(value, 16) >= 0 for value in facts.values())


def test_a_different_profile_directory_warns(db_url: str, tmp_path: Path,
                                             app_factory: Callable[..., Flask]) -> None:
    """A host whose profile folder holds another mapping profile starts with a 'profiles' warning."""
    check_agreement(app_factory(db_url))
    folder = tmp_path / "profiles"
    folder.mkdir()
    (folder / "site-logger.json").write_text(json.dumps({"name": "site-logger", "columns": {"Zs": "zs_ohm"}}))
    warned = check_agreement(app_factory(db_url, OHMTALLY_PROFILE_DIR=str(folder)))
    assert [w.name for w in warned] == ["profiles"]
    assert warned[0].recorded_by is not None and "ohmtally" in warned[0].recorded_by


@needs_keys
def test_a_host_with_other_keys_is_refused(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """Host A encrypts with K1; a host with only K2 is refused, naming the setting; A's key is not shown."""
    first = _key()
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=first))
    assert _facts(app_factory(db_url))["agree.encryption_keys"] == key_fingerprints([first])[0]
    with pytest.raises(HostsDisagree, match="OHMTALLY_ENCRYPTION_KEY") as refused:
        check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=_key()))
    assert first not in str(refused.value)
    with pytest.raises(HostsDisagree, match="it has none"):
        check_agreement(app_factory(db_url))


@needs_keys
def test_a_key_rotation_in_the_documented_order_passes(db_url: str,
                                                       app_factory: Callable[..., Flask]) -> None:
    """old → (old,new) everywhere → (new,old): every step starts; a host left on old alone is refused."""
    old, new = _key(), _key()
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=old))
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=f"{old},{new}"))
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=f"{new},{old}"))
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=f"{old},{new}"))  # a host not yet flipped
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=f"{new},{old}"))
    with pytest.raises(HostsDisagree):
        check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=old))


@needs_keys
def test_serve_refuses_a_host_with_other_keys(db_url: str, tmp_path: Path,
                                              app_factory: Callable[..., Flask],
                                              runner: Callable[..., tuple[int, str, str]],
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    """`ohmtally serve` with a key that is not the recorded one exits 2 before any worker starts."""
    check_agreement(app_factory(db_url, OHMTALLY_ENCRYPTION_KEY=_key()))
    monkeypatch.setenv("OHMTALLY_DATABASE_URL", db_url)
    monkeypatch.setenv("OHMTALLY_INSTANCE_PATH", str(tmp_path))
    monkeypatch.setenv("OHMTALLY_ENCRYPTION_KEY", _key())
    status, _out, err = runner("serve", "--bind", "127.0.0.1:8999")
    assert status == 2 and "OHMTALLY_ENCRYPTION_KEY" in err
