"""Persistence: migrations own the schema, restarts keep jobs, concurrent writers lose nothing."""

from __future__ import annotations

import subprocess
import sys
import textwrap
from collections.abc import Callable
from pathlib import Path

import pytest
from flask import Flask
from sqlalchemy import create_engine, func, select

from api.db.models import Base, FieldHistory
from api.db.schema import SchemaNotCurrent
from api.db.session import make_engine

pytestmark = pytest.mark.postgres


def test_models_match_the_migrations(db_url: str) -> None:
    """Alembic's autogenerate finds no difference between the migrated schema and the models."""
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    engine = create_engine(db_url)
    with engine.connect() as connection:
        diff = compare_metadata(MigrationContext.configure(connection), Base.metadata)
    engine.dispose()
    assert diff == []


def test_unmigrated_database_refuses_to_start(tmp_path: Path, app_factory: Callable[..., Flask]) -> None:
    """create_app on an empty database raises, naming `ohmtally db upgrade`."""
    with pytest.raises(SchemaNotCurrent, match="ohmtally db upgrade"):
        app_factory(f"sqlite:///{tmp_path / 'empty.sqlite3'}")


def test_restart_keeps_every_job(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """Jobs, circuits and uploads written by one app are all there in a new app on the same database."""
    first = app_factory(db_url)
    client = first.test_client()
    ids = [client.post("/v1/jobs", json={"reference": f"R{i}", "site": "S"}).get_json()["id"]
           for i in range(3)]
    client.post(f"/v1/jobs/{ids[0]}/readings", data="board,circuit,zs_ohm\nA,1,0.4\n",
                content_type="text/csv")
    first.extensions["ohmtally.engine"].dispose()
    second = app_factory(db_url).test_client()
    assert [j["id"] for j in second.get("/v1/jobs").get_json()["items"]] == ids
    circuits = second.get(f"/v1/jobs/{ids[0]}/circuits").get_json()["circuits"]
    assert circuits[0]["record"]["zs_ohm"] == 0.4
    assert len(second.get(f"/v1/jobs/{ids[0]}/uploads").get_json()["uploads"]) == 1


_WRITER = textwrap.dedent("""
    import sys
    from api.app import create_app
    url, job, tag, count = sys.argv[1], int(sys.argv[2]), sys.argv[3], int(sys.argv[4])
    app = create_app({"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "ERROR"})
    client = app.test_client()
    for i in range(count):
        csv = "board,circuit,zs_ohm,r1_r2_ohm\\n" + "".join(
            f"DB{tag},{c},0.{i + 1},0.{c + 1}\\n" for c in range(1, 4)) + f"DBX,1,0.{i + 1},0.2\\n"
        r = client.post(f"/v1/jobs/{job}/readings", data=csv, content_type="text/csv")
        assert r.status_code == 200, r.get_data()
""")


def test_two_processes_posting_to_one_job_lose_nothing(db_url: str,
                                                        app_factory: Callable[..., Flask]) -> None:
    """Two processes each post 15 uploads of 8 values to one job: all 240 values are in history."""
    app = app_factory(db_url)
    job = app.test_client().post("/v1/jobs", json={"reference": "C", "site": "S"}).get_json()["id"]
    count = 15
    root = Path(__file__).resolve().parents[2]
    writers = [subprocess.Popen([sys.executable, "-c", _WRITER, db_url, str(job), tag, str(count)], cwd=root,
                                stderr=subprocess.PIPE) for tag in ("A", "B")]
    for writer in writers:
        _out, err = writer.communicate(timeout=120)
        assert writer.returncode == 0, err.decode()[-2000:]
    engine = make_engine(db_url)
    with engine.connect() as connection:
        values = connection.execute(select(func.count()).select_from(FieldHistory)).scalar_one()
    engine.dispose()
    assert values == 2 * count * 4 * 2  # processes × uploads × rows × fields
    client = app.test_client()
    circuits = client.get(f"/v1/jobs/{job}/circuits?history=true").get_json()["circuits"]
    assert sorted((c["board"], c["circuit"]) for c in circuits) == sorted(
        [("DBA", str(c)) for c in range(1, 4)] + [("DBB", str(c)) for c in range(1, 4)] + [("DBX", "1")])
    shared = next(c for c in circuits if c["board"] == "DBX")
    assert len(shared["history"]["zs_ohm"]) == 2 * count  # both writers' values, none lost
    assert len(client.get(f"/v1/jobs/{job}/uploads").get_json()["uploads"]) == 2 * count
