"""Limits: body size (413), rows and line length (413, body kept as rejected), rate per key (429 +
Retry-After), the gunicorn timeout and the loopback-only rule of OHMTALLY_AUTH=off in `serve`.

Sources: RFC 9110 §15.5.14 (413 Content Too Large), RFC 6585 §4 (429 Too Many
Requests) and RFC 9110 §10.2.3 (Retry-After, delay-seconds); the loopback
range 127.0.0.0/8 and ::1 (RFC 1122 §3.2.1.3, RFC 4291 §2.5.3).
"""

from __future__ import annotations

import argparse
import json
from collections.abc import Callable
from typing import Any

import pytest
from flask import Flask

from tests.api.keyring import bearer, issue_key, unique_org


def _job(client: Any, headers: dict[str, str] | None = None) -> int:
    created = client.post("/v1/jobs", json={"reference": "LIM", "site": "s"}, headers=headers or {})
    job_id: int = created.get_json()["id"]
    return job_id


def test_body_over_the_size_limit_is_413(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_MAX_UPLOAD_BYTES=2000: a 2001-byte body is a 413 problem and stores nothing."""
    client = app_factory(db_url, OHMTALLY_MAX_UPLOAD_BYTES="2000").test_client()
    job_id = _job(client)
    body = b"board=DB1 circuit=1 zs=0.41\n" * 72  # 28 × 72 = 2016 bytes
    response = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=body, content_type="text/plain")
    assert response.status_code == 413 and response.mimetype == "application/problem+json"
    assert client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"] == []


def test_rows_over_the_limit_refuse_the_body_and_keep_it(db_url: str,
                                                          app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_MAX_ROWS=5: six rows or six JSON circuits → 413 too_many_rows; body kept, nothing merged."""
    client = app_factory(db_url, OHMTALLY_MAX_ROWS="5").test_client()
    job_id = _job(client)
    lines = b"".join(b"board=DB1 circuit=%d zs=0.4\n" % n for n in range(6))
    refused = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=lines, content_type="text/plain")
    assert refused.status_code == 413 and refused.get_json()["code"] == "too_many_rows"
    assert refused.get_json()["errors"][0]["line"] == 6  # the first line past the five allowed
    circuits = {"circuits": [{"board": "DB1", "circuit": str(n)} for n in range(6)]}
    refused_json = client.post(f"/v1/jobs/{job_id}/readings", data=json.dumps(circuits),
                               content_type="application/json")
    assert refused_json.status_code == 413 and refused_json.get_json()["code"] == "too_many_rows"
    assert refused_json.get_json()["errors"][0]["pointer"] == "/circuits/5"
    uploads = client.get(f"/v1/jobs/{job_id}/uploads").get_json()["uploads"]
    assert [u["status"] for u in uploads] == ["rejected", "rejected"]
    assert client.get(f"/v1/jobs/{job_id}/circuits").get_json()["circuits"] == []
    five = b"".join(b"board=DB1 circuit=%d zs=0.4\n" % n for n in range(5))
    taken = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=five, content_type="text/plain")
    assert taken.status_code == 200 and taken.get_json()["accepted"] == 5


def test_a_line_over_the_limit_is_413_naming_it(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """OHMTALLY_MAX_LINE_BYTES=64: a 65-byte second line → 413 line_too_long at line 2; on /verify too."""
    client = app_factory(db_url, OHMTALLY_MAX_LINE_BYTES="64").test_client()
    job_id = _job(client)
    body = b"board=DB1 circuit=1 zs=0.41\n" + b"board=DB1 circuit=2 description=" + b"x" * 33 + b"\n"
    assert len(body.splitlines()[1]) == 65
    response = client.post(f"/v1/jobs/{job_id}/readings?adapter=lines", data=body, content_type="text/plain")
    assert response.status_code == 413 and response.get_json()["code"] == "line_too_long"
    assert response.get_json()["errors"] == [{"line": 2, "code": "line_too_long",
                                              "reason": "longer than 64 bytes"}]
    stateless = client.post("/v1/verify", data=body, content_type="text/plain")
    assert stateless.status_code == 413 and stateless.get_json()["code"] == "line_too_long"


def test_rate_limit_per_key_is_429_with_retry_after(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """RATE_LIMIT=3/minute: a key's 4th request → 429 + Retry-After (1–60 s); others unaffected."""
    app = app_factory(db_url, OHMTALLY_AUTH="on", OHMTALLY_RATE_LIMIT="3/minute")
    client = app.test_client()
    org = unique_org()
    first, second = bearer(issue_key(app, org)[1]), bearer(issue_key(app, org)[1])
    assert [client.get("/v1/jobs", headers=first).status_code for _ in range(3)] == [200, 200, 200]
    limited = client.get("/v1/jobs", headers=first)
    assert limited.status_code == 429 and limited.mimetype == "application/problem+json"
    assert limited.get_json()["code"] == "rate_limited"
    assert 1 <= int(limited.headers["Retry-After"]) <= 60
    assert client.get("/v1/jobs", headers=second).status_code == 200
    assert all(client.get("/v1/health").status_code == 200 for _ in range(5))


def test_responses_are_never_sniffed_or_cached(auth_client: Any) -> None:
    """An upload sent as text/html comes back as an attachment with nosniff and a sandbox CSP, not a page."""
    job_id = _job(auth_client)
    page = b"<script>alert(1)</script>"
    refused = auth_client.post(f"/v1/jobs/{job_id}/readings", data=page, content_type="text/html")
    upload_id = refused.get_json()["upload"]["id"]
    served = auth_client.get(f"/v1/jobs/{job_id}/uploads/{upload_id}")
    assert served.get_data() == page  # kept exactly, returned as data
    assert served.headers["X-Content-Type-Options"] == "nosniff"
    assert "sandbox" in served.headers["Content-Security-Policy"]
    assert served.headers["Content-Disposition"].startswith("attachment")
    assert served.headers["Cache-Control"] == "no-store"


def _serve_args(**given: Any) -> argparse.Namespace:
    return argparse.Namespace(**{"bind": "127.0.0.1:8000", "workers": 1, "timeout": None,
                                 "control_socket": None, **given})


@pytest.mark.parametrize("bind", ["0.0.0.0:8000", "[::]:8000", "192.168.1.20:8000", "example.org:80"])
def test_serve_refuses_auth_off_beyond_loopback(bind: str, monkeypatch: pytest.MonkeyPatch,
                                                capsys: pytest.CaptureFixture[str]) -> None:
    """`serve` with OHMTALLY_AUTH=off exits 3 on any bind that is not loopback or a unix socket."""
    from api.cli import serve as cli_serve

    monkeypatch.setenv("OHMTALLY_AUTH", "off")
    monkeypatch.setattr(cli_serve, "_application", lambda *_a: pytest.fail("server started"))
    assert cli_serve.run(_serve_args(bind=bind)) == 3
    assert "refusing OHMTALLY_AUTH=off" in capsys.readouterr().err


@pytest.mark.parametrize("bind", ["127.0.0.1:8000", "127.8.9.10:1", "[::1]:8000", "localhost:8000",
                                  "unix:/tmp/s"])
def test_serve_allows_auth_off_on_loopback_with_the_timeout_setting(
        bind: str, db_url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """On loopback `serve` starts gunicorn, with timeout = OHMTALLY_REQUEST_TIMEOUT_S unless --timeout."""
    from api.cli import serve as cli_serve

    started: list[dict[str, Any]] = []

    class _Fake:
        def __init__(self, options: dict[str, Any]) -> None:
            self.options = options

        def run(self) -> None:
            started.append(self.options)

    monkeypatch.setenv("OHMTALLY_AUTH", "off")
    monkeypatch.setenv("OHMTALLY_DATABASE_URL", db_url)
    monkeypatch.setenv("OHMTALLY_REQUEST_TIMEOUT_S", "17")
    monkeypatch.setattr(cli_serve, "_application", lambda _factory, options: _Fake(dict(options)))
    assert cli_serve.run(_serve_args(bind=bind)) == 0
    assert cli_serve.run(_serve_args(bind=bind, timeout=5)) == 0
    assert [s["timeout"] for s in started] == [17, 5] and started[0]["bind"] == [bind]
