"""Settings from OHMTALLY_* variables, and auth failing closed when keys are required."""

from __future__ import annotations

from collections.abc import Callable

import pytest
from flask import Flask

from api.settings import SETTINGS, SettingsError, load_settings


def test_defaults_are_the_documented_ones() -> None:
    """With no variables set, every setting takes the default the SETTINGS table documents."""
    settings = load_settings(environ={})
    table = {s.name: s.default for s in SETTINGS}
    assert settings.auth is (table["AUTH"] == "on")
    assert settings.database_url == table["DATABASE_URL"] == ""
    assert settings.max_upload_bytes == int(table["MAX_UPLOAD_BYTES"])
    assert settings.page_limit == int(table["PAGE_LIMIT"]) and settings.log_level == table["LOG_LEVEL"]


def test_environment_then_overrides() -> None:
    """OHMTALLY_ variables are read, and the config mapping wins over them."""
    env = {"OHMTALLY_AUTH": "off", "OHMTALLY_PROFILE_DIR": "/srv/profiles", "OHMTALLY_PAGE_LIMIT": "9000"}
    settings = load_settings({"OHMTALLY_PROFILE_DIR": "/elsewhere"}, environ=env)
    assert settings.auth is False and settings.profile_dir == "/elsewhere"
    assert settings.page_limit == 500  # capped: one page never holds more than 500 jobs


@pytest.mark.parametrize("env", [{"OHMTALLY_AUTH": "maybe"}, {"OHMTALLY_MAX_UPLOAD_BYTES": "lots"},
                                 {"OHMTALLY_PAGE_LIMIT": "0"}, {"OHMTALLY_LOG_LEVEL": "chatty"}])
def test_bad_values_stop_start_up(env: dict[str, str]) -> None:
    """A setting the server cannot work with raises SettingsError naming the variable."""
    with pytest.raises(SettingsError, match="OHMTALLY_"):
        load_settings(environ=env)


def test_auth_on_without_a_key_store_fails_closed(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_AUTH=on refuses job and verify routes with a 401 problem; health stays open."""
    client = app_factory(db_url, OHMTALLY_AUTH="on").test_client()
    assert client.get("/v1/health").status_code == 200
    refused = client.get("/v1/jobs")
    assert refused.status_code == 401 and refused.mimetype == "application/problem+json"
    assert client.post("/v1/verify", json={"circuits": []}).status_code == 401
