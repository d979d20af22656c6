"""Query parameters and headers that broke the server: charsets that are codecs, dates at the edge
of the calendar, forged cursors, profiles given as paths. Each is a 4xx problem naming it.

Sources: RFC 9110 §8.3.2 (the charset parameter names a character encoding), the IANA Character
Sets registry (rot13, zlib, uu are no charsets), RFC 3339 §5.6 (date-time with an offset), RFC 9457
(problem details), Python's codecs documentation ("Binary Transforms" and "Text Transforms" are not
text encodings), PostgreSQL's BIGINT range (−2**63 … 2**63 − 1).
"""

from __future__ import annotations

import base64
import json
import os
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient

pytestmark = pytest.mark.postgres

CSV = b"board,circuit,zs_ohm\nDB1,1,0.41\n"


def _cursor(data: object) -> str:
    return base64.urlsafe_b64encode(json.dumps(data).encode()).decode().rstrip("=")


@pytest.mark.parametrize("charset", ["rot13", "zlib_codec", "uu_codec", "base64", "hex", "bz2_codec",
                                     "unicode_escape", "raw_unicode_escape", "punycode", "idna", "utf-7",
                                     "undefined", "no-such-charset"])
def test_a_charset_that_is_no_character_encoding_is_415(client: FlaskClient, charset: str) -> None:
    """charset=rot13 / zlib_codec / uu_codec (transforms, not encodings) were a 500 → 415 naming it."""
    answer = client.post("/v1/verify", data=CSV, content_type=f"text/csv; charset={charset}")
    assert answer.status_code == 415 and answer.get_json()["code"] == "unknown_charset"
    assert answer.get_json()["errors"][0]["parameter"] == "Content-Type"


@pytest.mark.parametrize("charset", ["utf-8", "UTF-8", "cp1252", "iso-8859-15", "latin-1", "ascii"])
def test_character_encodings_are_read(client: FlaskClient, charset: str) -> None:
    """Real charsets (RFC 9110 §8.3.2) are read as before."""
    answer = client.post("/v1/verify", data=CSV, content_type=f"text/csv; charset={charset}")
    assert answer.status_code == 200 and len(answer.get_json()["verdicts"]) == 1


@pytest.mark.parametrize("since", ["", "0001-01-01T00:00:00%2B01:00", "9999-12-31T23:59:59-01:00",
                                   "2026-13-01T00:00:00Z", "2026-12-01", "2026-12-01T10:00:00", "now"])
def test_updated_since_outside_the_calendar_is_422(client: FlaskClient, backend: str, since: str) -> None:
    """Empty, year 1 at +01:00 and year 9999 at −01:00 (both leave the calendar in UTC) were 500s."""
    answer = client.get(f"/v1/jobs?updated_since={since}")
    assert answer.status_code == 422, answer.get_data(as_text=True)[:200]
    assert answer.get_json()["errors"][0]["parameter"] == "updated_since"


@pytest.mark.parametrize("since", ["0001-01-01T00:00:00Z", "0001-01-01T00:00:00-01:00",
                                   "9999-12-31T23:59:59Z", "9999-12-31T23:59:59%2B01:00"])
def test_updated_since_at_the_calendar_edges_is_taken(client: FlaskClient, backend: str, since: str) -> None:
    """The first and last instants of years 1–9999 in UTC are valid filters (all jobs, or none)."""
    client.post("/v1/jobs", json={"reference": "EDGE", "site": "s"})
    answer = client.get(f"/v1/jobs?updated_since={since}")
    assert answer.status_code == 200
    assert len(answer.get_json()["items"]) == (1 if since.startswith("0001") else 0)


@pytest.mark.parametrize("after", [2**63, 2**64, 10**30, -1, -(2**63) - 1, True, 1.5, "7", None])
def test_a_forged_cursor_is_400_on_every_paged_list(hooks: FlaskClient, backend: str, after: object) -> None:
    """A cursor past a 64-bit id (2**63 was an OverflowError on SQLite: 500) or of the wrong type is a
    400 bad_cursor on the jobs list, a job's circuits and a webhook's deliveries."""
    job = hooks.post("/v1/jobs", json={"reference": "C", "site": "s"}).get_json()
    sub = hooks.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/hook", "events": ["job.created"]})
    assert sub.status_code == 201
    forged = _cursor({"after": after, "at": "2026-12-01T00:00:00+00:00"})
    paths = ("/v1/jobs", f"/v1/jobs/{job['id']}/circuits", f"/v1/webhooks/{sub.get_json()['id']}/deliveries")
    for path in paths:
        answer = hooks.get(f"{path}?cursor={forged}")
        assert answer.status_code == 400, (path, answer.get_data(as_text=True)[:200])
        assert answer.get_json()["code"] == "bad_cursor"
        assert answer.get_json()["errors"][0]["parameter"] == "cursor"
    for junk in ("%%%", _cursor([1]), _cursor({"after": 1, "at": "yesterday"}), "e30"):
        assert hooks.get(f"/v1/jobs?cursor={junk}").status_code == 400


@pytest.mark.parametrize("profile", ["/etc/passwd", "/etc/hostname.json", "../../../etc/passwd",
                                     "example-logger-regex/../../x", "x.json", "C:\\x.json", ".hidden"])
def test_a_profile_is_a_name_never_a_path(client: FlaskClient, tmp_path: Path, profile: str) -> None:
    """?profile= with a path (it loaded any JSON file on the server: 404 if missing, 422 naming its
    first key if not) → 404 unknown_profile, the same answer whether the file exists or not."""
    answer = client.post(f"/v1/verify?adapter=csv&profile={profile}", data=CSV, content_type="text/csv")
    assert answer.status_code == 404 and answer.get_json()["code"] == "unknown_profile"
    assert answer.get_json()["errors"][0]["parameter"] == "profile"
    existing = tmp_path / "secret.json"
    existing.write_text('{"kind": "csv", "name": "leak", "columns": {"Zs": "zs_ohm"}}')
    for path in (str(existing), os.path.relpath(existing)):
        by_path = client.post(f"/v1/verify?adapter=csv&profile={path}", data=CSV, content_type="text/csv")
        missing = client.post(f"/v1/verify?adapter=csv&profile={path}.nope.json", data=CSV,
                              content_type="text/csv")
        assert by_path.status_code == missing.status_code == 404
        assert by_path.get_json()["detail"] == missing.get_json()["detail"]


def test_profile_names_from_the_profile_directory_still_work(db_url: str, app_factory: object,
                                                             tmp_path: Path) -> None:
    """A built-in profile and one from OHMTALLY_PROFILE_DIR are used by name."""
    folder = tmp_path / "profiles"
    folder.mkdir()
    (folder / "site-meter.json").write_text(json.dumps({
        "kind": "csv", "name": "site-meter", "description": "test",
        "columns": {"Loop": {"field": "zs_ohm"}}}))
    app: Flask = app_factory(db_url, OHMTALLY_PROFILE_DIR=str(folder))  # type: ignore[operator]
    client = app.test_client()
    ours = client.post("/v1/verify?adapter=csv&profile=site-meter", data=b"board,circuit,Loop\nDB1,1,0.41\n",
                       content_type="text/csv")
    assert ours.status_code == 200, ours.get_data(as_text=True)[:300]
    builtin = client.post("/v1/verify?adapter=lines&profile=example-logger-regex",
                          data=b"nothing here\n", content_type="text/plain")
    assert builtin.status_code == 200
