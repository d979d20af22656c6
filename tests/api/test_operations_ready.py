"""``GET /v1/ready``: 200 when the database answers and its schema is servable, else a 503 problem;
open without a key, cheap (one query), and distinct from ``/v1/health`` (which never asks the database).
"""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import event, select

from api.db.schema import DEPLOYMENT_FACTS, SERVES_FROM, schema_window
from engine import __version__

pytestmark = pytest.mark.postgres


def test_ready_when_the_database_is_at_this_build(app: Flask, client: FlaskClient) -> None:
    """A migrated database: 200 with this build's version, the database's revision and its floor."""
    response = client.get("/v1/ready")
    assert response.status_code == 200
    body = response.get_json()
    head = schema_window().head
    with app.extensions["ohmtally.engine"].connect() as connection:  # the floor as the database holds it
        floor = connection.execute(select(DEPLOYMENT_FACTS.c.value).where(
            DEPLOYMENT_FACTS.c.name == SERVES_FROM)).scalar_one()
    assert body == {"status": "ready", "version": __version__,
                    "schema": {"revision": head, "head": head, "serves_from": floor}}
    # an expand migration after the last contract one leaves the floor behind the head, on its line
    assert floor in schema_window().line


def test_ready_asks_the_database_once(app: Flask, client: FlaskClient) -> None:
    """A readiness probe costs one SQL statement (the revision and the floor in one query)."""
    statements: list[str] = []

    def count(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        statements.append(statement)

    engine = app.extensions["ohmtally.engine.read"]
    event.listen(engine, "before_cursor_execute", count)
    try:
        assert client.get("/v1/ready").status_code == 200
    finally:
        event.remove(engine, "before_cursor_execute", count)
    selects = [s for s in statements if s.lstrip().upper().startswith("SELECT")]
    assert len(selects) == 1, statements


def test_ready_and_health_need_no_key_but_metrics_needs_admin(auth_app: Flask) -> None:
    """With API keys on: /v1/ready and /v1/health answer without a key; /v1/metrics 401 without one."""
    client = auth_app.test_client()
    assert client.get("/v1/ready").status_code == 200
    assert client.get("/v1/health").status_code == 200
    refused = client.get("/v1/metrics")
    assert refused.status_code == 401 and refused.mimetype == "application/problem+json"


def test_ready_is_503_when_the_database_does_not_answer(tmp_path: Path,
                                                         app_factory: Callable[..., Flask],
                                                         sqlite_template: Path) -> None:
    """A database file replaced by garbage under a running app: ready 503 database_unavailable, health 200."""
    path = tmp_path / "broken.sqlite3"
    path.write_bytes(sqlite_template.read_bytes())
    app = app_factory(f"sqlite:///{path}")
    client = app.test_client()
    assert client.get("/v1/ready").status_code == 200
    garbage = tmp_path / "garbage"
    garbage.write_bytes(b"this is not a database file " * 200)
    os.replace(garbage, path)
    for name in ("ohmtally.engine", "ohmtally.engine.read"):
        app.extensions[name].dispose()  # new connections open the replaced file
    ready = client.get("/v1/ready")
    assert ready.status_code == 503
    problem = ready.get_json()
    assert problem["code"] == "database_unavailable"
    assert str(path) not in problem["detail"]  # where the database lives is not told to anyone asking
    assert client.get("/v1/health").status_code == 200  # liveness: the process itself is fine


def test_ready_is_documented(auth_client: FlaskClient) -> None:
    """The OpenAPI document of a server with keys lists /v1/ready (200 and the 503 problem) without
    security, and /v1/metrics as text needing an admin key."""
    spec = auth_client.get("/v1/openapi.json").get_json()
    ready = spec["paths"]["/v1/ready"]["get"]
    assert ready["security"] == []
    assert set(ready["responses"]) >= {"200", "503"}
    assert "application/problem+json" in ready["responses"]["503"]["content"]
    metrics = spec["paths"]["/v1/metrics"]["get"]
    assert "text/plain" in metrics["responses"]["200"]["content"]
    assert metrics["security"] == [{"apiKey": ["admin"]}]
    assert metrics["x-ohmtally-scope"] == "admin"
