"""Rolling deploys: a build boots on a database at its head or at a newer *compatible* revision, and
``GET /v1/ready`` says whether it can serve the database it is on.

A database "one revision ahead" is made for real: the migrations are copied to a
temporary folder, one more migration is added (an expand one that adds a table,
or a contract one that raises the floor with ``raise_floor``), and a fresh
database is upgraded with that folder, as a newer build would. Then this build,
whose head is one revision behind, is started on it.
"""

from __future__ import annotations

import os
import shutil
import textwrap
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from alembic import command
from flask import Flask
from sqlalchemy import create_engine, text
from sqlalchemy.engine import make_url

from api.db.schema import (
    SchemaNotCurrent,
    SchemaState,
    SchemaWindow,
    alembic_config,
    schema_window,
    upgrade,
)

pytestmark = pytest.mark.postgres
HEAD = schema_window().head
MIGRATIONS = Path(__file__).resolve().parents[2] / "api" / "db" / "migrations"
AHEAD = "0999_test_ahead"

_EXPAND = '''
revision = "{ahead}"
down_revision = "{head}"
branch_labels = None
depends_on = None

import sqlalchemy as sa
from alembic import op


def upgrade() -> None:
    op.create_table("test_expand_only", sa.Column("id", sa.Integer(), primary_key=True))


def downgrade() -> None:
    op.drop_table("test_expand_only")
'''

_CONTRACT = '''
revision = "{ahead}"
down_revision = "{head}"
branch_labels = None
depends_on = None

from alembic import op

from api.db.schema import raise_floor


def upgrade() -> None:
    raise_floor(op.get_bind(), revision)  # as a migration that drops what older code reads


def downgrade() -> None:
    raise_floor(op.get_bind(), "{head}")
'''


def _scripts_ahead(tmp_path: Path, body: str) -> str:
    folder = tmp_path / "migrations"
    shutil.copytree(MIGRATIONS, folder, ignore=shutil.ignore_patterns("__pycache__"))
    (folder / "versions" / f"{AHEAD}.py").write_text(textwrap.dedent(body.format(ahead=AHEAD, head=HEAD)))
    return str(folder)


@pytest.fixture
def fresh_url(backend: str, tmp_path: Path) -> Iterator[str]:
    """An empty database of this test's own (a new SQLite file, or a new PostgreSQL schema)."""
    if backend == "sqlite":
        yield f"sqlite:///{tmp_path / 'ahead.sqlite3'}"
        return
    base = os.environ["OHMTALLY_TEST_POSTGRES_URL"]
    schema = f"ohmtally_ahead_{uuid.uuid4().hex[:10]}"
    admin = create_engine(base)
    with admin.begin() as connection:
        connection.execute(text(f'CREATE SCHEMA "{schema}"'))
    try:
        yield make_url(base).update_query_dict({"options": f"-csearch_path={schema}"}).render_as_string(
            hide_password=False)
    finally:
        with admin.begin() as connection:
            connection.execute(text(f'DROP SCHEMA "{schema}" CASCADE'))
        admin.dispose()


def test_expand_migration_ahead_still_boots(fresh_url: str, tmp_path: Path,
                                            app_factory: Callable[..., Flask]) -> None:
    """A database one expand migration ahead keeps the floor: this build boots, serves and is ready."""
    upgrade(fresh_url, script_location=_scripts_ahead(tmp_path, _EXPAND))
    app = app_factory(fresh_url)
    client = app.test_client()
    ready = client.get("/v1/ready")
    assert ready.status_code == 200
    floor = ready.get_json()["schema"]["serves_from"]  # the expand left the floor where HEAD had it
    assert ready.get_json()["schema"] == {"revision": AHEAD, "head": HEAD, "serves_from": floor}
    assert floor in schema_window().line and floor != AHEAD
    made = client.post("/v1/jobs", json={"reference": "rolling", "site": "Invented site"})
    assert made.status_code == 201  # old code writes to the newer schema as it always did


def test_contract_migration_ahead_refuses_with_the_floor(fresh_url: str, tmp_path: Path,
                                                         app_factory: Callable[..., Flask]) -> None:
    """A database whose contract migration raised the floor past this build refuses to boot, naming both."""
    upgrade(fresh_url, script_location=_scripts_ahead(tmp_path, _CONTRACT))
    with pytest.raises(SchemaNotCurrent) as refused:
        app_factory(fresh_url)
    message = str(refused.value)
    assert refused.value.code == "schema_too_new"
    assert AHEAD in message and HEAD in message and "deploy a build" in message
    assert "ohmtally db upgrade" not in message  # upgrading cannot help an older build


def test_ready_turns_503_when_a_contract_migration_lands_under_a_running_build(
        fresh_url: str, tmp_path: Path, app_factory: Callable[..., Flask]) -> None:
    """A build already running when a contract migration lands answers /v1/ready 503 schema_too_new."""
    upgrade(fresh_url)
    client = app_factory(fresh_url).test_client()
    assert client.get("/v1/ready").status_code == 200
    upgrade(fresh_url, script_location=_scripts_ahead(tmp_path, _CONTRACT))
    ready = client.get("/v1/ready")
    assert ready.status_code == 503 and ready.mimetype == "application/problem+json"
    problem = ready.get_json()
    assert problem["code"] == "schema_too_new"
    assert problem["schema"] == {"revision": AHEAD, "head": HEAD, "serves_from": AHEAD}


def test_ready_says_the_database_is_behind(fresh_url: str, app_factory: Callable[..., Flask]) -> None:
    """A database downgraded one revision under a running build: /v1/ready 503 schema_behind."""
    upgrade(fresh_url)
    client = app_factory(fresh_url).test_client()
    command.downgrade(alembic_config(fresh_url), "-1")
    ready = client.get("/v1/ready")
    assert ready.status_code == 503
    assert ready.get_json()["code"] == "schema_behind"
    assert "ohmtally db upgrade" in ready.get_json()["detail"]


def test_serve_refuses_a_database_past_its_floor(fresh_url: str, tmp_path: Path,
                                                  runner: Callable[..., tuple[int, str, str]],
                                                  monkeypatch: pytest.MonkeyPatch) -> None:
    """`ohmtally serve` on a database a contract migration moved past this build exits 2 with the reason."""
    upgrade(fresh_url, script_location=_scripts_ahead(tmp_path, _CONTRACT))
    monkeypatch.setenv("OHMTALLY_DATABASE_URL", fresh_url)
    monkeypatch.setenv("OHMTALLY_INSTANCE_PATH", str(tmp_path))
    status, _out, err = runner("serve", "--bind", "127.0.0.1:8999")
    assert status == 2
    assert f"code older than revision {AHEAD} cannot serve" in err


_WINDOW = SchemaWindow(head="c", known=frozenset({"a", "b", "c", "x"}), line=frozenset({"a", "b", "c"}))
_CASES = [  # (database revision, floor) → refusal code, None when servable
    (("c", None), None),
    (("c", "b"), None),
    ((None, None), "schema_missing"),
    (("b", "b"), "schema_behind"),
    (("x", None), "schema_diverged"),
    (("d", "c"), None),
    (("d", "a"), None),
    (("d", "d"), "schema_too_new"),
    (("d", None), "schema_too_new"),
    (("d", "x"), "schema_too_new"),
]


@pytest.mark.parametrize(("state", "expected"), _CASES)
def test_the_rule_for_every_kind_of_database(state: tuple[str | None, str | None],
                                             expected: str | None) -> None:
    """SchemaWindow.refusal: the head serves; a newer revision serves when its floor is on this build's
    line; anything else is refused with its code."""
    refusal = _WINDOW.refusal(SchemaState(*state))
    assert (refusal.code if refusal is not None else None) == expected
