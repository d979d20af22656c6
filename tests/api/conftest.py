"""Fixtures for the API tests: ``app``, ``client`` and ``runner`` on a fresh database.

- Every test gets its own SQLite file, copied from one migrated at the start
  of the run (migrating once keeps the suite fast).
- Tests marked ``postgres`` run twice: on SQLite and, when
  ``OHMTALLY_TEST_POSTGRES_URL`` is set, on PostgreSQL, in a schema created for
  this test run and dropped after it (tables are emptied between tests).
- ``client`` checks every response against the app's OpenAPI document, so
  every test is also a test of the document.
"""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from api.app import create_app
from api.db.schema import upgrade
from api.db.session import close_engines
from tests.api.openapi_check import check_response
from tests.api.webhook_receiver import Receiver

POSTGRES_ENV = "OHMTALLY_TEST_POSTGRES_URL"
_TABLES = ("webhook_deliveries", "webhook_events", "webhook_subscriptions",
           "idempotency_records", "api_keys", "field_history", "circuits", "uploads", "jobs")


def pytest_generate_tests(metafunc: pytest.Metafunc) -> None:
    if "backend" not in metafunc.fixturenames:
        return
    backends: list[Any] = ["sqlite"]
    if metafunc.definition.get_closest_marker("postgres"):
        backends.append(pytest.param("postgres", marks=pytest.mark.skipif(
            not os.environ.get(POSTGRES_ENV), reason=f"{POSTGRES_ENV} is not set")))
    metafunc.parametrize("backend", backends)


@pytest.fixture(scope="session")
def sqlite_template(tmp_path_factory: pytest.TempPathFactory) -> Path:
    path = tmp_path_factory.mktemp("template") / "ohmtally.sqlite3"
    upgrade(f"sqlite:///{path}")
    return path


@pytest.fixture(scope="session")
def postgres_url() -> Iterator[str]:
    """A schema of our own for this run, migrated once; dropped at the end."""
    base = os.environ.get(POSTGRES_ENV)
    if not base:
        pytest.skip(f"{POSTGRES_ENV} is not set")
    schema = f"ohmtally_test_{uuid.uuid4().hex[:12]}"
    admin = create_engine(base)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    url = make_url(base).update_query_dict({"options": f"-csearch_path={schema}"})
    rendered = url.render_as_string(hide_password=False)
    try:
        upgrade(rendered)
        yield rendered
    finally:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
        admin.dispose()


@pytest.fixture
def backend() -> str:
    return "sqlite"


@pytest.fixture
def db_url(request: pytest.FixtureRequest, backend: str, tmp_path: Path) -> Iterator[str]:
    if backend == "sqlite":
        path = tmp_path / "ohmtally.sqlite3"
        shutil.copy(request.getfixturevalue("sqlite_template"), path)
        yield f"sqlite:///{path}"
        return
    url: str = request.getfixturevalue("postgres_url")
    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(text(f"TRUNCATE {', '.join(_TABLES)} RESTART IDENTITY CASCADE"))
    engine.dispose()
    yield url


class SpecCheckingClient(FlaskClient):
    """A test client that validates every response against the app's OpenAPI document."""

    def open(self, *args: Any, **kwargs: Any) -> Any:
        response = super().open(*args, **kwargs)
        request = response.request
        spec = self.application.extensions["ohmtally.openapi"].spec.to_dict()
        checked = check_response(spec, request.method, request.path, response.status_code,
                                 response.content_type, response.get_data())
        if not checked and request.path != "/v1/openapi.json":
            assert response.status_code in (404, 405), f"{request.method} {request.path} is not documented"
        return response


def make_app(url: str, tmp_path: Path, **extra: Any) -> Flask:
    app = create_app({"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off",
                      "OHMTALLY_LOG_LEVEL": "WARNING", "OHMTALLY_INSTANCE_PATH": str(tmp_path),
                      "TESTING": True, **extra})
    app.test_client_class = SpecCheckingClient
    return app


@pytest.fixture
def app_factory(tmp_path: Path) -> Iterator[Callable[..., Flask]]:
    """``app_factory(url, **settings)``: apps whose connection pools are closed after the test."""
    made: list[Flask] = []

    def factory(url: str, **extra: Any) -> Flask:
        made.append(make_app(url, tmp_path, **extra))
        return made[-1]

    yield factory
    for application in made:
        close_engines(application)


@pytest.fixture
def app(db_url: str, app_factory: Callable[..., Flask]) -> Flask:
    return app_factory(db_url)


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


@pytest.fixture
def auth_app(db_url: str, app_factory: Callable[..., Flask]) -> Flask:
    """An app with OHMTALLY_AUTH=on (API keys required), as in production."""
    return app_factory(db_url, OHMTALLY_AUTH="on")


@pytest.fixture
def auth_client(auth_app: Flask) -> FlaskClient:
    """A client of ``auth_app`` sending a read,write key of its own organisation on every request."""
    from tests.api.keyring import issue_key, unique_org

    _key_id, secret = issue_key(auth_app, unique_org())
    client = auth_app.test_client()
    client.environ_base["HTTP_AUTHORIZATION"] = f"Bearer {secret}"
    return client


@pytest.fixture
def runner(capsys: pytest.CaptureFixture[str]) -> Callable[..., tuple[int, str, str]]:
    """Run ``ohmtally ARGS…`` in-process: (exit status, stdout, stderr)."""
    from api.cli import main

    def run(*argv: str) -> tuple[int, str, str]:
        capsys.readouterr()
        try:
            status = main(list(argv))
        except SystemExit as exc:
            status = int(exc.code or 0)
        captured = capsys.readouterr()
        return status, captured.out, captured.err

    return run


# Webhook tests: an app that may deliver to loopback, and a receiver on a loopback port.
@pytest.fixture
def hook_app(db_url: str, app_factory: Callable[..., Flask]) -> Flask:
    return app_factory(db_url, OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")


@pytest.fixture
def hooks(hook_app: Flask) -> FlaskClient:
    return hook_app.test_client()


@pytest.fixture
def receiver() -> Iterator[Receiver]:
    found = Receiver().start()
    yield found
    found.stop()
