"""API keys: 401/403 as RFC 6750 says, keys stored as hashes only, revoked and expired keys refused.

Sources: RFC 6750 §3 (WWW-Authenticate: Bearer, error="invalid_token" /
"insufficient_scope"), RFC 9110 §11.6.1; the brief's "≥ 128 bits of
randomness" for a key (common practice for bearer secrets, e.g. OWASP's
session-id guidance of at least 64 bits of entropy, taken here as twice that).
"""

from __future__ import annotations

import hashlib
import math
from datetime import timedelta

import pytest
from flask import Flask
from flask.testing import FlaskClient
from sqlalchemy import select

from api.db.models import ApiKey, utcnow
from api.http.keys import KEY_PREFIX, find_key, hash_secret
from tests.api.keyring import bearer, issue_key, unique_org

pytestmark = pytest.mark.postgres

JOB = {"reference": "AUTH-1", "site": "invented test site"}
_BASE64URL = set("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_")


def test_health_and_openapi_need_no_key(auth_app: Flask) -> None:
    """/v1/health and /v1/openapi.json answer 200 without a key; the document declares bearer auth."""
    client = auth_app.test_client()
    assert client.get("/v1/health").status_code == 200
    spec = client.get("/v1/openapi.json").get_json()
    assert spec["components"]["securitySchemes"]["apiKey"]["scheme"] == "bearer"
    assert spec["security"] == [{"apiKey": []}]
    assert spec["paths"]["/v1/health"]["get"]["security"] == []


def test_missing_key_is_401_with_bearer_challenge(auth_app: Flask) -> None:
    """Every other route without Authorization → 401 problem with WWW-Authenticate: Bearer (RFC 6750 §3)."""
    client = auth_app.test_client()
    for method, path in (("GET", "/v1/jobs"), ("POST", "/v1/jobs"), ("GET", "/v1/jobs/1/circuits"),
                         ("POST", "/v1/verify"), ("GET", "/v1/rulesets"), ("GET", "/v1/adapters")):
        response = client.open(path, method=method, json={})
        assert response.status_code == 401, (method, path)
        assert response.mimetype == "application/problem+json"
        assert response.headers["WWW-Authenticate"].startswith("Bearer")
        assert response.get_json()["code"] == "missing_api_key"


def test_bad_keys_are_401_and_never_echoed(auth_app: Flask) -> None:
    """Wrong, malformed or non-Bearer credentials → 401 invalid_token; the secret is not in the answer."""
    client = auth_app.test_client()
    _id, secret = issue_key(auth_app, unique_org())
    wrong = secret[:-4] + ("AAAA" if not secret.endswith("AAAA") else "BBBB")
    for header in (f"Bearer {wrong}", f"Basic {secret}", "Bearer", "Bearer oht_short",
                   f"Bearer {secret}x" * 3):
        response = client.get("/v1/jobs", headers={"Authorization": header})
        assert response.status_code == 401, header
        assert "Bearer" in response.headers["WWW-Authenticate"]
        text = response.get_data(as_text=True)
        assert secret not in text and wrong not in text and "oht_short" not in text


def test_good_key_works_and_scope_is_enforced(auth_app: Flask) -> None:
    """A read key reads but gets 403 insufficient_scope on a write; a write-only key cannot read."""
    client = auth_app.test_client()
    org = unique_org()
    _r, reader = issue_key(auth_app, org, "read")
    _w, writer = issue_key(auth_app, org, "write")
    _a, admin = issue_key(auth_app, org, "admin")
    assert client.get("/v1/jobs", headers=bearer(reader)).status_code == 200
    assert client.post("/v1/verify", json={"circuits": []}, headers=bearer(reader)).status_code == 200
    refused = client.post("/v1/jobs", json=JOB, headers=bearer(reader))
    assert refused.status_code == 403 and refused.get_json()["code"] == "insufficient_scope"
    assert 'error="insufficient_scope"' in refused.headers["WWW-Authenticate"]
    created = client.post("/v1/jobs", json=JOB, headers=bearer(writer))
    assert created.status_code == 201
    assert client.get("/v1/jobs", headers=bearer(writer)).status_code == 403
    assert client.get(f"/v1/jobs/{created.get_json()['id']}", headers=bearer(admin)).status_code == 200


def test_revoked_and_expired_keys_fail(auth_app: Flask, runner: object) -> None:
    """A key revoked (CLI) or past its expiry answers 401; an unexpired one beside it still works."""
    client = auth_app.test_client()
    org = unique_org()
    revoked_id, revoked = issue_key(auth_app, org)
    _e, expired = issue_key(auth_app, org, expires_at=utcnow() - timedelta(seconds=1))
    _f, future = issue_key(auth_app, org, expires_at=utcnow() + timedelta(days=1))
    assert client.get("/v1/jobs", headers=bearer(revoked)).status_code == 200
    with auth_app.app_context():
        session = auth_app.extensions["ohmtally.db"]()
        session.get(ApiKey, revoked_id).revoked_at = utcnow()
        session.commit()
        session.close()
    gone = client.get("/v1/jobs", headers=bearer(revoked))
    assert gone.status_code == 401 and gone.get_json()["code"] == "revoked_api_key"
    late = client.get("/v1/jobs", headers=bearer(expired))
    assert late.status_code == 401 and late.get_json()["code"] == "expired_api_key"
    assert client.get("/v1/jobs", headers=bearer(future)).status_code == 200


def test_keys_are_random_prefixed_and_stored_only_as_sha256(auth_app: Flask) -> None:
    """A key is oht_ + ≥ 128 bits of base64url; the database holds its SHA-256 (FIPS 180-4), not the key."""
    secrets = [issue_key(auth_app, unique_org())[1] for _ in range(5)]
    assert len(set(secrets)) == 5
    for secret in secrets:
        assert secret.startswith(KEY_PREFIX)
        token = secret[len(KEY_PREFIX):]
        # base64url carries log2(64) = 6 bits a character (RFC 4648 §5): 43 characters ≥ 256 bits
        assert math.log2(64) * len(token) >= 256 and set(token) <= _BASE64URL
    with auth_app.app_context():
        session = auth_app.extensions["ohmtally.db"]()
        rows = list(session.scalars(select(ApiKey)))
        stored = {r.key_hash for r in rows}
        for secret in secrets:
            assert hashlib.sha256(secret.encode()).hexdigest() in stored
            assert hash_secret(secret) == hashlib.sha256(secret.encode()).hexdigest()
            assert find_key(session, secret) is not None
        for row in rows:
            assert not any(s in (row.key_hash, row.prefix, row.name) for s in secrets)
            assert len(row.prefix) < len(KEY_PREFIX) + 10  # the listed prefix is too short to authenticate
        session.close()


def test_keys_cli_create_list_revoke(auth_app: Flask, db_url: str, runner: object) -> None:
    """`ohmtally keys create` prints the secret once (stdout), `list` never shows it, `revoke` stops it."""
    run = runner  # type: ignore[assignment]
    org = unique_org("cli firm")
    status, out, err = run("keys", "create", "--org", org, "--name", "van 3 logger", "--scope",
                           "read,write", "--expires", "30d", "--database-url", db_url)
    assert status == 0, err
    secret = out.strip()
    assert secret.startswith(KEY_PREFIX) and "Authorization: Bearer" in err
    client: FlaskClient = auth_app.test_client()
    assert client.get("/v1/jobs", headers=bearer(secret)).status_code == 200
    status, listing, _ = run("keys", "list", "--database-url", db_url)
    assert status == 0 and "van 3 logger" in listing and secret not in listing
    assert hash_secret(secret) not in listing
    key_id = next(line.split("\t")[0] for line in listing.splitlines() if "van 3 logger" in line)
    assert run("keys", "revoke", key_id, "--database-url", db_url)[0] == 0
    assert client.get("/v1/jobs", headers=bearer(secret)).status_code == 401
    assert run("keys", "create", "--org", org, "--name", "x", "--scope", "root",
               "--database-url", db_url)[0] == 3
    assert run("keys", "create", "--org", org, "--name", "x", "--expires", "soon",
               "--database-url", db_url)[0] == 3
    assert run("keys", "revoke", "999999", "--database-url", db_url)[0] == 2


def test_auth_off_serves_the_local_organisation(client: FlaskClient) -> None:
    """With OHMTALLY_AUTH=off no key is needed and jobs belong to the seeded 'local' organisation."""
    created = client.post("/v1/jobs", json=JOB)
    assert created.status_code == 201 and created.get_json()["organisation"] == "local"
