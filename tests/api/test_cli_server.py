"""The server commands: ``db upgrade``, ``serve`` (a real gunicorn process), ``demo``.

The end-to-end test posts the demo files to a real ``ohmtally serve`` on a
free loopback port with httpx, checks every response against the served
OpenAPI document, and compares the job's verdicts with the offline path
(adapters + ``engine.verify``) over the same files.
"""

from __future__ import annotations

import io
import os
import subprocess
import sys
from collections.abc import Callable, Iterator
from itertools import chain
from pathlib import Path
from typing import Any

import httpx
import pytest

from adapters import AdapterOptions, Collected, collect
from adapters.registry import get_adapter
from api.cli.demo import free_port, wait_healthy
from api.cli.demo_manifest import DEFAULT_MANIFEST, ManifestError, load_manifest
from api.cli.serve import is_loopback_bind
from api.db.schema import upgrade
from engine import verify
from tests.api.openapi_check import check_response

ROOT = Path(__file__).resolve().parents[2]
Runner = Callable[..., tuple[int, str, str]]


@pytest.mark.parametrize(("bind", "loopback"), [
    ("127.0.0.1:8000", True), ("127.5.0.1:80", True), ("[::1]:8000", True), ("localhost:9", True),
    ("unix:/tmp/ohmtally.sock", True), ("0.0.0.0:8000", False), ("192.168.1.20:8000", False),
    ("[::]:8000", False), ("example.org:80", False),
])
def test_loopback_binds(bind: str, loopback: bool) -> None:
    """Only loopback addresses (RFC 5735 127/8, RFC 4291 ::1) and Unix sockets count as loopback binds."""
    assert is_loopback_bind(bind) is loopback


def test_serve_refuses_auth_off_off_loopback(runner: Runner, monkeypatch: pytest.MonkeyPatch) -> None:
    """`ohmtally serve --bind 0.0.0.0:…` with OHMTALLY_AUTH=off exits 3 with a message, serving nothing."""
    monkeypatch.setenv("OHMTALLY_AUTH", "off")
    status, _out, err = runner("serve", "--bind", "0.0.0.0:8999")
    assert status == 3 and "refusing OHMTALLY_AUTH=off" in err


def test_serve_refuses_unmigrated_database(runner: Runner, monkeypatch: pytest.MonkeyPatch,
                                           tmp_path: Path) -> None:
    """`ohmtally serve` on an empty database exits 2 naming `ohmtally db upgrade`."""
    monkeypatch.setenv("OHMTALLY_DATABASE_URL", f"sqlite:///{tmp_path / 'empty.sqlite3'}")
    monkeypatch.setenv("OHMTALLY_AUTH", "off")
    status, _out, err = runner("serve", "--bind", "127.0.0.1:8999")
    assert status == 2 and "ohmtally db upgrade" in err


def test_db_upgrade_creates_the_schema(runner: Runner, tmp_path: Path) -> None:
    """`ohmtally db upgrade --database-url` migrates an empty file; a bad URL is exit 2 with a message."""
    url = f"sqlite:///{tmp_path / 'new.sqlite3'}"
    status, out, _err = runner("db", "upgrade", "--database-url", url)
    assert status == 0 and "newest revision" in out
    from api.app import create_app

    app = create_app({"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "ERROR"})
    assert app.test_client().get("/v1/jobs").status_code == 200
    app.extensions["ohmtally.engine"].dispose()
    bad, _out, err = runner("db", "upgrade", "--database-url", f"sqlite:///{tmp_path}/no/such/dir/x.db")
    assert bad == 2 and "cannot migrate" in err


def test_manifest_errors_name_the_member(tmp_path: Path) -> None:
    """A manifest with a bad member or a missing file is refused naming the JSON pointer."""
    bad = tmp_path / "manifest.json"
    bad.write_text('{"job": {"site": "S"}, "uploads": [{"file": "x.csv", "content_type": "text/csv"}]}')
    with pytest.raises(ManifestError, match="/job/reference"):
        load_manifest(bad)
    bad.write_text('{"job": {"reference": "R", "site": "S"}, '
                   '"uploads": [{"file": "x.csv", "content_type": "text/csv"}]}')
    with pytest.raises(ManifestError, match="/uploads/0/file"):
        load_manifest(bad)


def _env(**extra: str) -> dict[str, str]:
    return {**os.environ, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "WARNING", **extra}


@pytest.fixture
def server(tmp_path: Path) -> Iterator[str]:
    url = f"sqlite:///{tmp_path / 'served.sqlite3'}"
    upgrade(url)
    port = free_port()
    child = subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind", f"127.0.0.1:{port}",
                              "--workers", "2"], cwd=ROOT, env=_env(OHMTALLY_DATABASE_URL=url))
    base = f"http://127.0.0.1:{port}"
    try:
        assert wait_healthy(base, child), "ohmtally serve did not come up"
        yield base
    finally:
        child.terminate()
        child.wait(timeout=20)


def _offline() -> Collected:
    """The demo files read offline by the adapters alone, in upload order: records merged per circuit
    and field, facts per board and installation (later wins), as one input."""
    streams = []
    for spec in load_manifest().uploads:
        options = AdapterOptions(profile=spec.profile)
        name = spec.adapter or ("json" if "json" in spec.content_type else "csv")
        streams.append(get_adapter(name).read(io.BytesIO(spec.path.read_bytes()), options))
    return collect(chain(*streams))


def test_demo_files_through_a_real_server(server: str) -> None:
    """The demo files posted to a real `ohmtally serve` give the offline verdicts; responses fit the spec."""
    with httpx.Client(base_url=server, timeout=30) as client:
        spec = client.get("/v1/openapi.json").json()

        def checked(response: httpx.Response) -> Any:
            assert check_response(spec, response.request.method, response.request.url.path,
                                  response.status_code, response.headers.get("content-type"),
                                  response.content)
            return response.json() if "json" in response.headers.get("content-type", "") else response

        manifest = load_manifest()
        job = checked(client.post("/v1/jobs", json=manifest.job))
        for upload in manifest.uploads:
            raw = upload.path.read_bytes()
            body = checked(client.post(f"/v1/jobs/{job['id']}/readings", content=raw,
                                       headers={"Content-Type": upload.content_type}, params=upload.params()))
            assert body["accepted"] > 0
            stored = client.get(f"/v1/jobs/{job['id']}/uploads/{body['upload']['id']}")
            checked(stored)
            assert stored.content == raw
        verdicts = checked(client.get(f"/v1/jobs/{job['id']}/verdicts"))
        offline = _offline()
        assert offline.errors == []
        assert verdicts["verdicts"] == [v.as_dict() for v in verify(offline.records, job["ruleset"],
                                                                     site=offline.site)]
        for path in ("/v1/health", "/v1/rulesets", f"/v1/rulesets/{job['ruleset']}", "/v1/adapters",
                     "/v1/jobs", f"/v1/jobs/{job['id']}", f"/v1/jobs/{job['id']}/circuits?history=true",
                     f"/v1/jobs/{job['id']}/uploads"):
            checked(client.get(path))
        checked(client.post("/v1/verify", content=b"{", headers={"Content-Type": "application/json"}))


def _changes_section(out: str) -> list[str]:
    lines = out.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("since the previous visit"))
    return [line for line in lines[start + 1:] if line.startswith("  ")]


def test_demo_no_wait_prints_the_report_and_stops(tmp_path: Path) -> None:
    """`ohmtally demo --no-wait` migrates, serves, posts, prints verdicts, the changes since the previous
    visit and the caution, exits 0; run again on the same database it says the same (the demo job
    names its previous visit, so the first run's job is never taken for it)."""
    outs = []
    for _run in range(2):
        port = free_port()
        command = [sys.executable, "-m", "api.cli", "demo", "--no-wait", "--port", str(port)]
        done = subprocess.run(command, cwd=ROOT, env=_env(OHMTALLY_INSTANCE_PATH=str(tmp_path)),
                              capture_output=True, text=True, timeout=90)
        assert done.returncode == 0, done.stderr[-2000:]
        outs.append(done.stdout)
    changes = _changes_section(outs[0])
    assert any("NEEDS A LOOK: IR L-E" in line for line in changes), changes  # trade words, not field names
    assert changes == _changes_section(outs[1])
    out = outs[1]
    manifest = load_manifest(DEFAULT_MANIFEST)
    assert manifest.job["reference"] in out and f"http://127.0.0.1:{port}/v1" in out
    assert "board DB1" in out and "CAUTION: Decision aid only" in out
    assert (tmp_path / "ohmtally.sqlite3").is_file()
    with pytest.raises(httpx.ConnectError):
        httpx.get(f"http://127.0.0.1:{port}/v1/health", timeout=2)


def test_examples_run_against_a_real_server(tmp_path: Path) -> None:
    """examples/api/client.py, every curl script and README.md's commands against a real server: each
    request is answered with the status the example expects (a script that reached a missing job, a
    refusal or a 500 fails here, not only a 500), and the client's pages of the demo job's verdicts
    count exactly the outcomes of the same files verified offline."""
    import ast
    import re
    import shutil
    from collections import Counter

    from tests.api.test_docs import shell_blocks
    from tests.api.webhook_receiver import Receiver

    url = f"sqlite:///{tmp_path / 'examples.sqlite3'}"
    upgrade(url)
    port = free_port()
    # webhooks.sh subscribes a receiver on loopback: only a server allowing private targets takes it
    child = subprocess.Popen([sys.executable, "-m", "api.cli", "serve", "--bind", f"127.0.0.1:{port}",
                              "--workers", "2"], cwd=ROOT,
                             env=_env(OHMTALLY_DATABASE_URL=url, OHMTALLY_INSTANCE_PATH=str(tmp_path),
                                      OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on"))
    receiver = Receiver().start()
    server = f"http://127.0.0.1:{port}"
    try:
        assert wait_healthy(server, child), "ohmtally serve did not come up"
        done = subprocess.run([sys.executable, str(ROOT / "examples/api/client.py"), "--url", server],
                              capture_output=True, text=True, errors="replace", timeout=120)
        assert done.returncode == 0, done.stderr[-2000:]
        assert "--- verdicts page 1: HTTP 200" in done.stdout
        assert "HTTP 422 application/problem+json" in done.stdout
        assert re.search(r"the same batch again: HTTP 200, Ohmtally-Replay: \d{4}-", done.stdout)
        offline = _offline()
        counted = Counter(v.outcome.value for v in verify(offline.records, "bs7671-2018-a2",
                                                          site=offline.site))
        read = re.search(r"^--- verdicts: every page read: (\{.*\})$", done.stdout, re.M)
        assert read and Counter(ast.literal_eval(read.group(1))) == counted, done.stdout[-2000:]

        if shutil.which("curl") is None:
            pytest.skip("curl is not installed")
        # Each script prints "-> HTTP <status>" after each answer; these are the statuses it must get.
        expected = {
            "health": [200, 200, 200], "rulesets": [200, 200], "adapters": [200], "openapi": [200, 200],
            "verify": [200, 200, 200], "jobs": [201, 201, 200, 200, 200], "readings": [201, 200, 200, 200],
            "site": [201, 200, 200, 200, 200, 200], "circuits": [201, 200, 200, 200, 200, 200],
            "uploads": [201, 200, 200, 200], "sync": [201, 200, 200, 304, 200, 200, 200, 200],
            "errors": [422, 404, 415, 200], "webhooks": [201, 200, 200, 200, 204],
            "visits": [201, 200, 201, 200, 200],
        }
        assert sorted(expected) == sorted(p.stem for p in (ROOT / "examples/api").glob("*.sh")
                                          if not p.name.startswith("_"))
        path = f"{Path(sys.executable).parent}{os.pathsep}{os.environ.get('PATH', '')}"  # python3 for them
        env = {**os.environ, "PATH": path, "OHMTALLY_URL": server, "WEBHOOK_URL": receiver.url}
        env.pop("OHMTALLY_API_KEY", None)
        printed: dict[str, str] = {}
        for name, statuses in expected.items():
            script = subprocess.run(["bash", str(ROOT / f"examples/api/{name}.sh")], env=env,
                                    capture_output=True, text=True, errors="replace", timeout=60)
            assert script.returncode == 0, f"{name}.sh: {script.stderr[-1000:]}"
            got = [int(s) for s in re.findall(r"^-> HTTP (\d{3})$", script.stdout, re.M)]
            assert got == statuses, f"{name}.sh answered {got}\n{script.stdout[-2000:]}"
            printed[name] = script.stdout
        assert re.search(r"^ohmtally-replay: \d{4}-", printed["readings"], re.M | re.I)  # resend replayed
        assert re.search(r"^ohmtally-failing-circuits: [1-9]", printed["verify"], re.M | re.I)
        assert '"secret":"whsec_' in printed["webhooks"]  # a Standard Webhooks secret, shown once

        # README.md's commands against a server: every sh block that talks to $OHMTALLY_URL
        blocks = [b for b in shell_blocks(ROOT / "README.md") if "$OHMTALLY_URL" in b]
        assert blocks
        for block in blocks:
            ran = subprocess.run(["bash", "-e", "-o", "pipefail", "-c", block],
                                 env={**env, "OHMTALLY_URL": server}, capture_output=True, text=True,
                                 errors="replace", timeout=60)
            assert ran.returncode == 0, ran.stderr[-1000:]
            assert '"accepted":' in ran.stdout and '"rejected":[]' in ran.stdout, ran.stdout[-2000:]
            assert re.search(r"^DB1 +1 +\(circuit\) +PASS", ran.stdout, re.M), ran.stdout[-2000:]
            assert "CAUTION: Decision aid only" in ran.stdout
    finally:
        receiver.stop()
        child.terminate()
        child.wait(timeout=20)
