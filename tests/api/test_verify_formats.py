"""POST /v1/verify?format=json|junit|csv|table with ?fail_on= / ?warn_on=.

External references:
- The CLI, ``ohmtally verify --format``, run in-process on the same circuits
  written to a file: the API must give the same bytes for csv and json
  (api/README.md, "The command line": "--format json prints exactly the body POST /v1/verify would
  return"; README.md: "the same renderers answer POST /v1/verify?format=").
- junitparser reads the JUnit document as a CI server's plug-in does; the
  standard library's csv module reads the CSV (RFC 4180).
- Outcomes come from the polarity check, BS 7671 Reg. 643.6: polarity recorded
  as incorrect fails, no record of it is incomplete. Circuits are invented.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Callable
from pathlib import Path

import pytest
from flask.testing import FlaskClient
from junitparser import Failure, JUnitXml, Skipped

from engine import NOTICE

Runner = Callable[..., tuple[int, str, str]]

CIRCUITS = [
    {"board": "DB1", "circuit": "1", "polarity_ok": True},
    {"board": "DB1", "circuit": "2", "polarity_ok": False},
    {"board": "DB2", "circuit": "1"},
]
BODY = {"circuits": CIRCUITS}


def _cases(xml_bytes: bytes) -> dict[tuple[str, str], list[object]]:
    """(classname, case name) → the result elements of the polarity cases."""
    xml = JUnitXml.fromstring(xml_bytes)
    suites = [xml] if xml._tag == "testsuite" else list(xml)
    out: dict[tuple[str, str], list[object]] = {}
    for suite in suites:
        for case in suite:
            if case.name == "polarity":
                out[(case.classname, case.name)] = list(case.result)
    return out


def test_default_is_json_and_names_the_failing_count(client: FlaskClient) -> None:
    """Without ?format the answer is the JSON body; the header counts circuits failing under fail_on=fail."""
    response = client.post("/v1/verify", json=BODY)
    assert response.status_code == 200 and response.mimetype == "application/json"
    body = response.get_json()
    failing = sum(1 for v in body["verdicts"] if v["outcome"] == "fail")
    assert failing >= 1  # DB1/2: polarity recorded false fails (Reg. 643.6)
    assert response.headers["Ohmtally-Failing-Circuits"] == str(failing)


def test_json_format_is_the_cli_bytes(client: FlaskClient, runner: Runner, tmp_path: Path) -> None:
    """?format=json gives exactly what `ohmtally verify --format json` prints for the same circuits."""
    path = tmp_path / "job.json"
    path.write_text(json.dumps(BODY), encoding="utf-8")
    _status, out, _err = runner("verify", str(path), "--format", "json")
    response = client.post("/v1/verify?format=json", json=BODY)
    assert response.mimetype == "application/json"
    assert response.get_data(as_text=True) == out
    assert json.loads(out) == client.post("/v1/verify", json=BODY).get_json()


def test_csv_format_is_the_cli_bytes_and_reads_as_rfc4180(client: FlaskClient, runner: Runner,
                                                           tmp_path: Path) -> None:
    """?format=csv equals `ohmtally verify --format csv`; DictReader finds a polarity row per circuit."""
    path = tmp_path / "job.json"
    path.write_text(json.dumps(BODY), encoding="utf-8")
    _status, out, err = runner("verify", str(path), "--format", "csv")
    response = client.post("/v1/verify?format=csv", json=BODY)
    assert response.headers["Content-Type"] == "text/csv; charset=utf-8; header=present"
    text = response.get_data(as_text=True)
    assert text.replace("\r\n", "\n") == out.replace("\r\n", "\n")
    rows = [r for r in csv.DictReader(io.StringIO(text, newline="")) if r["check"] == "polarity"]
    assert {(r["board"], r["circuit"]): r["outcome"] for r in rows} == {
        ("DB1", "1"): "pass", ("DB1", "2"): "fail", ("DB2", "1"): "incomplete"}
    # CSV has no place for prose: the caution rides in a header (API) and on stderr (CLI)
    assert response.headers["Ohmtally-Notice"] == NOTICE
    assert err.strip() == "CAUTION: " + NOTICE


def test_junit_follows_the_policy(client: FlaskClient) -> None:
    """?format=junit: fail is a <failure>, incomplete a <skipped> warning; fail_on=incomplete fails it too."""
    default = client.post("/v1/verify?format=junit", json=BODY)
    assert default.mimetype == "application/xml"
    cases = _cases(default.get_data())
    assert [type(r) for r in cases[("DB1.2", "polarity")]] == [Failure]
    assert [type(r) for r in cases[("DB2.1", "polarity")]] == [Skipped]
    assert cases[("DB1.1", "polarity")] == []
    strict = client.post("/v1/verify?format=junit&fail_on=incomplete", json=BODY)
    strict_cases = _cases(strict.get_data())
    assert [type(r) for r in strict_cases[("DB2.1", "polarity")]] == [Failure]
    failing = int(strict.headers["Ohmtally-Failing-Circuits"])
    assert failing > int(default.headers["Ohmtally-Failing-Circuits"])


def test_table_is_text_with_the_notice(client: FlaskClient) -> None:
    """?format=table is plain UTF-8 text naming every circuit and ending with the safety notice."""
    response = client.post("/v1/verify?format=table&warn_on=none", json=BODY)
    assert response.headers["Content-Type"] == "text/plain; charset=utf-8"
    text = response.get_data(as_text=True)
    assert "DB1" in text and "DB2" in text
    assert "decision aid" in text.lower()


@pytest.mark.parametrize("query, parameter", [
    ("format=xlsx", "format"), ("fail_on=pass", "fail_on"), ("warn_on=fail", "warn_on")])
def test_bad_format_or_policy_is_a_422_naming_the_parameter(client: FlaskClient, query: str,
                                                            parameter: str) -> None:
    """An unknown format or policy spelling is a problem+json 422 pointing at that query parameter."""
    response = client.post(f"/v1/verify?{query}", json=BODY)
    assert response.status_code == 422 and response.mimetype == "application/problem+json"
    assert [e["parameter"] for e in response.get_json()["errors"]] == [parameter]


def test_formats_are_in_the_openapi_document(client: FlaskClient) -> None:
    """The 200 of POST /v1/verify documents JSON, XML, CSV, text, HTML and the compact view's JSON, and
    the format and view parameters' choices."""
    spec = client.get("/v1/openapi.json").get_json()
    operation = spec["paths"]["/v1/verify"]["post"]
    assert set(operation["responses"]["200"]["content"]) == {
        "application/json", "application/xml", "text/csv", "text/plain", "text/html",
        "application/vnd.ohmtally.compact+json"}
    param = next(p for p in operation["parameters"] if p["name"] == "format")
    assert set(param["schema"]["enum"]) == {"json", "junit", "csv", "table", "html"}
    view = next(p for p in operation["parameters"] if p["name"] == "view")
    assert set(view["schema"]["enum"]) == {"full", "compact"}
