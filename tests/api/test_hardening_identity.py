"""Identity: job ids count nothing (random, 53-bit, 64-bit columns); organisations are their slug,
chosen once, and a name that only differs in case or punctuation is refused, never merged.

Sources: RFC 7493 §2.2 (integers within ±(2**53 − 1) are exact in every JSON reader); OWASP API
Security Top 10 (2023) API1 and the enumeration of sequential identifiers (common practice);
PostgreSQL's integer types (INTEGER is 32-bit, BIGINT 64-bit).
"""

from __future__ import annotations

import sys
from collections.abc import Callable
from typing import Any

import pytest
from flask import Flask
from flask.testing import FlaskClient

from api.db.models import Organisation
from api.http.keys import KeySpecError, organisation_named
from tests.api.keyring import bearer, issue_key, unique_org

pytestmark = pytest.mark.postgres

SAFE = 2**53 - 1
LINES = b"board=DB1 circuit=1 zs=0.41\n"


def test_job_ids_are_random_53_bit_integers_listed_in_creation_order(client: FlaskClient,
                                                                       backend: str) -> None:
    """30 jobs: distinct ids in 1 … 2**53 − 1 that are no count (no two consecutive, spread over the
    range), and the list is still in creation order."""
    ids = [client.post("/v1/jobs", json={"reference": f"R{n}", "site": "s"}).get_json()["id"]
           for n in range(30)]
    assert len(set(ids)) == 30 and all(1 <= i <= SAFE for i in ids)
    assert not any(abs(a - b) == 1 for a in ids for b in ids)
    assert max(ids) > 2**40  # 30 draws all below 2**40 has probability (2**-13)**30
    listed: list[int] = []
    cursor = None
    while True:
        page = client.get("/v1/jobs?limit=7" + (f"&cursor={cursor}" if cursor else "")).get_json()
        listed += [j["id"] for j in page["items"]]
        cursor = page["next_cursor"]
        if not cursor:
            break
    assert listed == ids


def test_the_largest_job_id_works_on_every_job_route(client: FlaskClient, backend: str,
                                                     monkeypatch: pytest.MonkeyPatch) -> None:
    """A job with id 2**53 − 1 (beyond PostgreSQL's INTEGER) is created, read, patched and posted to;
    2**53 is a 404 from routing (not a driver overflow)."""
    monkeypatch.setattr(sys.modules["api.db.repository"], "new_job_id", lambda: SAFE)
    made = client.post("/v1/jobs", json={"reference": "BIG", "site": "s"})
    assert made.status_code == 201 and made.get_json()["id"] == SAFE
    assert client.get(f"/v1/jobs/{SAFE}").status_code == 200
    posted = client.post(f"/v1/jobs/{SAFE}/readings?adapter=lines", data=LINES, content_type="text/plain")
    assert posted.status_code == 200, posted.get_data(as_text=True)[:300]
    assert client.patch(f"/v1/jobs/{SAFE}", json={"external_ref": "crm-1"}).status_code == 200
    assert client.patch(f"/v1/jobs/{SAFE}/circuits/DB1/1", json={"external_ref": "c-1"}).status_code == 200
    assert client.get(f"/v1/jobs/{SAFE}/verdicts").status_code == 200
    assert client.get(f"/v1/jobs/{SAFE}/uploads/{2**31}").status_code == 404  # other ids stay 32-bit
    for missing in (SAFE - 1, SAFE + 1, 2**63, 0):
        assert client.get(f"/v1/jobs/{missing}").status_code == 404


def test_a_clash_of_random_ids_is_drawn_again(client: FlaskClient, backend: str,
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    """The id generator naming an existing job costs a retry, never a 500 or an overwrite."""
    first = client.post("/v1/jobs", json={"reference": "A", "site": "s"}).get_json()["id"]
    draws = iter([first, first, 12345])
    monkeypatch.setattr(sys.modules["api.db.repository"], "new_job_id", lambda: next(draws))
    second = client.post("/v1/jobs", json={"reference": "B", "site": "s"})
    assert second.status_code == 201 and second.get_json()["id"] == 12345
    assert client.get(f"/v1/jobs/{first}").get_json()["reference"] == "A"


def test_a_name_differing_only_in_case_or_punctuation_is_refused(auth_app: Flask) -> None:
    """'ACME Ltd' exists: 'acme ltd' and 'Acme, Ltd.' are refused (they silently became one tenant);
    the same spelling and the slug name the same organisation."""
    base = unique_org("ACME Ltd")
    issue_key(auth_app, base)
    with auth_app.app_context():
        session = auth_app.extensions["ohmtally.db"]()
        try:
            org = organisation_named(session, base, create=False)
            assert org is not None
            assert organisation_named(session, org.slug, create=False) is org
            for variant in (base.lower(), base.upper().replace(" ", ", ") + "."):
                with pytest.raises(KeySpecError, match="would collide"):
                    organisation_named(session, variant, create=True)
            with pytest.raises(KeySpecError, match="slug"):
                organisation_named(session, "Someone", create=True, slug="Not A Slug")
        finally:
            session.close()


def test_keys_cli_chooses_the_slug_once_and_refuses_a_collision(auth_app: Flask, db_url: str,
                                                                runner: Callable[..., Any]) -> None:
    """`keys create --org "North Sparks" --org-slug north` makes 'north'; `--org north` adds a key to
    it; `--org "NORTH SPARKS"` is exit 3 naming the slug; both keys work as one tenant."""
    name = unique_org("North Sparks")
    slug = "north-" + name.rsplit(" ", 1)[1]
    status, out, err = runner("keys", "create", "--org", name, "--org-slug", slug, "--name", "a",
                              "--scope", "read,write", "--database-url", db_url)
    assert status == 0, err
    assert f"--org {slug}" in err
    first = out.strip()
    status, out, err = runner("keys", "create", "--org", slug, "--name", "b", "--scope", "read,write",
                              "--database-url", db_url)
    assert status == 0 and "made" not in err
    second = out.strip()
    status, _out, err = runner("keys", "create", "--org", name.upper(), "--name", "c",
                               "--database-url", db_url)
    assert status == 3 and slug in err and "would collide" in err
    status, _out, err = runner("keys", "create", "--org", "x y", "--org-slug", "-bad-", "--name", "d",
                               "--database-url", db_url)
    assert status == 3 and "slug" in err
    client = auth_app.test_client()
    job = client.post("/v1/jobs", json={"reference": "N", "site": "s"}, headers=bearer(first)).get_json()
    assert job["organisation"] == slug
    assert client.get(f"/v1/jobs/{job['id']}", headers=bearer(second)).status_code == 200
    status, listing, _err = runner("keys", "list", "--org", slug, "--database-url", db_url)
    assert status == 0 and len([line for line in listing.splitlines()[1:] if line]) == 2
    with auth_app.app_context():
        session = auth_app.extensions["ohmtally.db"]()
        try:
            assert session.query(Organisation).filter(Organisation.name == name).count() == 1
        finally:
            session.close()
