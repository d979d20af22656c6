"""Every operation's example in the document is real traffic of an end-to-end visit, and still true.

:func:`visit` walks one invented site through the whole API (a verify, a job, its
installation and boards, readings in CSV and key=value lines, verdicts, pages, webhooks,
the reference page) with an admin key, each answer checked against the document by the
test client. With ``OHMTALLY_RECORD_EXAMPLES=1`` the exchanges are written to
api/openapi/examples/<operationId>.json, which the document shows as examples
(api/openapi/examples.py); without it, the tests check that every operation has a
recorded example, that every recorded example still fits the document, and that the
visit still answers each recorded request with the recorded status and media type.

A new route: add a step to :func:`visit`, run this file once with the variable set, and
commit the new file under api/openapi/examples/.
"""

from __future__ import annotations

import json
import os
import socket
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import parse_qs

import pytest
from cryptography.fernet import Fernet
from flask import Flask
from flask.testing import EnvironBuilder, FlaskClient
from openapi_schema_validator import OAS31Validator

import api.openapi
from api.openapi.examples import example_file_name, load_examples
from tests.api.keyring import bearer, issue_key, unique_org
from tests.api.openapi_check import check_response, operation_for

RECORD = os.environ.get("OHMTALLY_RECORD_EXAMPLES") == "1"
FOLDER = Path(api.openapi.__file__).parent / "examples"
_REQUEST_HEADERS = ("Idempotency-Key", "If-None-Match")
_ANSWER_HEADERS = ("Location", "ETag", "Link", "Ohmtally-Replay", "Ohmtally-Failing-Circuits")
_LARGE = 16_000  # bytes: a larger text answer is cut (said in it), a larger file shown by its URL

SITE = "Larch Mews community studio, unit 2 (invented example site)"
SITE_DOCUMENT: dict[str, Any] = {
    "ruleset": "bs7671-2018-a2",
    "installation": {"earthing": "TN-C-S", "nominal_voltage_v": 230, "supply": "public",
                     "ze_ohm": 0.19, "pfc_ka": 1.6},
    "boards": [{"board": "DB1", "description": "Studio board", "location": "store room"}],
    "circuits": [
        {"board": "DB1", "circuit": "1", "description": "Studio lighting", "device": "B6",
         "cable": "1.5/1.0", "length_m": 18, "r1_r2_ohm": 0.52, "zs_ohm": 0.71, "ir_le_mohm": ">299",
         "polarity_ok": True},
        {"board": "DB1", "circuit": "2", "description": "Studio sockets", "circuit_form": "ring",
         "device": "RCBO B32 30mA A", "cable": "2.5/1.5", "ring_r1_ohm": 0.31, "ring_rn_ohm": 0.31,
         "ring_r2_ohm": 0.52, "r1_r2_ohm": 0.21, "zs_ohm": 0.4, "ir_le_mohm": ">299",
         "rcd_trip_ms": 17, "polarity_ok": True},
    ],
}
READINGS_CSV = ("Board,Circuit,Description,Device,Cable,R1+R2,Zs,IR L-E\n"
                "DB1,3,Kiln supply,C20,4/1.5,0.29,0.48,>299\n"
                "DB1,4,Kitchenette,B16,2.5/1.5,0.33,0.52,>299\n")
READINGS_LINES = "board=DB1 circuit=3 zs=0.47 rcd_trip_ms=19\n"
#: The same studio's previous inspection (invented): the kiln's Zs has risen since, the lighting is as it was.
PREVIOUS_CIRCUITS: list[dict[str, Any]] = [
    {"board": "DB1", "circuit": "1", "device": "B6", "cable": "1.5/1.0", "r1_r2_ohm": 0.5, "zs_ohm": 0.69,
     "ir_le_mohm": ">299"},
    {"board": "DB1", "circuit": "3", "device": "C20", "cable": "4/1.5", "r1_r2_ohm": 0.27, "zs_ohm": 0.33,
     "ir_le_mohm": ">299"},
]


@dataclass
class Visit:
    """Exchanges of one visit: operationId → [(name, summary, body sent, response)]."""

    client: FlaskClient
    spec: dict[str, Any]
    exchanges: dict[str, list[tuple[str, str, bytes, Any]]] = field(default_factory=dict)

    def send(self, name: str, summary: str, method: str, path: str, **kwargs: Any) -> Any:
        """Send a request as the test client would, keeping the bytes of its body for the record."""
        builder = EnvironBuilder(self.client.application, path=path, method=method, **kwargs)
        try:
            sent = builder.get_request().get_data()
        finally:
            builder.close()
        response = self.client.open(path, method=method, **kwargs)
        found = operation_for(self.spec, method, response.request.path)
        assert found is not None, f"{method} {path} is no operation of the document"
        self.exchanges.setdefault(found[1]["operationId"], []).append((name, summary, sent, response))
        return response


def _body(data: bytes, content_type: str | None) -> Any:
    media = (content_type or "").split(";")[0].strip()
    if not data:
        return None
    if media.endswith("json"):
        return json.loads(data)
    return data.decode("utf-8")


def exchange_dict(name: str, summary: str, data: bytes, response: Any) -> dict[str, Any]:
    """One recorded exchange, as the example files hold it (api/openapi/examples.py)."""
    request = response.request
    sent: dict[str, Any] = {"method": request.method, "path": request.path}
    query = {k: v[0] if len(v) == 1 else v for k, v in parse_qs(request.query_string.decode()).items()}
    if query:
        sent["query"] = query
    headers = {h: request.headers[h] for h in _REQUEST_HEADERS if h in request.headers}
    if headers:
        sent["headers"] = headers
    if data:
        sent["content_type"] = request.content_type
        sent["body"] = _body(data, request.content_type)
    answer: dict[str, Any] = {"status": response.status_code}
    payload = response.get_data()
    if payload:
        answer["content_type"] = response.content_type
    shown = {h: response.headers[h] for h in _ANSWER_HEADERS if h in response.headers}
    if shown:
        answer["headers"] = shown
    if len(payload) > _LARGE and response.mimetype == "text/plain":  # Prometheus text: '#' starts a comment
        lines = payload.decode("utf-8").splitlines(keepends=True)
        kept = "".join(lines[:40])
        answer["body"] = kept + f"# … {len(lines) - 40} more lines, cut for this example\n"
    elif len(payload) > _LARGE and not response.mimetype.endswith("json"):
        answer["body"] = {"external": request.path.removeprefix("/v1/")}
    elif payload:
        answer["body"] = _body(payload, response.content_type)
    return {"name": name, "summary": summary, "request": sent, "response": answer}


def visit(client: FlaskClient, admin: dict[str, str]) -> Visit:
    """The end-to-end visit whose traffic becomes the document's examples (invented data only)."""
    seen = Visit(client, client.get("/v1/openapi.json").get_json())
    send = seen.send
    send("live", "Alive, with the version", "GET", "/v1/health")
    send("ready", "The database answers with a schema this build serves", "GET", "/v1/ready")
    send("list", "The built-in rulesets", "GET", "/v1/rulesets", headers=admin)
    send("detail", "One ruleset's limits with their sources", "GET", "/v1/rulesets/bs7671-2018-a2",
         headers=admin)
    send("list", "Adapters and profiles", "GET", "/v1/adapters", headers=admin)
    send("site-document", "A site document verified, nothing stored", "POST", "/v1/verify",
         json=SITE_DOCUMENT, headers=admin)
    earlier = client.post("/v1/jobs", json={"reference": "LM-1907", "site": SITE,
                                            "installation_ref": "LM-STUDIO", "tested_on": "2021-10-05"},
                          headers=admin).get_json()
    client.post(f"/v1/jobs/{earlier['id']}/readings", json={"circuits": PREVIOUS_CIRCUITS}, headers=admin)
    job = send("create", "A job for the visit, the installation's second inspection", "POST", "/v1/jobs",
               json={"reference": "LM-2031", "site": SITE, "ruleset": "bs7671-2018-a2",
                     "installation_ref": "LM-STUDIO", "tested_on": "2026-11-24"},
               headers={**admin, "Idempotency-Key": "lm-2031-create"}).get_json()
    client.post("/v1/jobs", json={"reference": "LM-2032", "site": SITE}, headers=admin)
    first = send("first-page", "The first page of jobs", "GET", "/v1/jobs", query_string={"limit": 1},
                 headers=admin).get_json()
    send("next-page", "The next page, by the cursor the first gave", "GET", "/v1/jobs",
         query_string={"limit": 1, "cursor": first["next_cursor"]}, headers=admin)
    jid = job["id"]
    send("read", "One job", "GET", f"/v1/jobs/{jid}", headers=admin)
    send("merge-patch", "The job's id in the office system, by merge patch", "PATCH", f"/v1/jobs/{jid}",
         data=json.dumps({"external_ref": "CRM-88412"}), content_type="application/merge-patch+json",
         headers=admin)
    subscription = {"url": "https://hooks.example.net/ohmtally", "description": "office system",
                    "events": ["job.created", "readings.accepted", "verdict.changed"]}
    hook = send("subscribe", "A subscription to every event; its secret is shown once", "POST",
                "/v1/webhooks", json=subscription, headers=admin).get_json()
    send("replace", "The installation's facts", "PUT", f"/v1/jobs/{jid}/installation",
         json=SITE_DOCUMENT["installation"], headers=admin)
    send("read", "The installation's facts", "GET", f"/v1/jobs/{jid}/installation", headers=admin)
    send("replace", "One board's facts", "PUT", f"/v1/jobs/{jid}/boards/DB1",
         json={"description": "Studio board", "location": "store room"}, headers=admin)
    send("list", "The boards with facts", "GET", f"/v1/jobs/{jid}/boards", headers=admin)
    send("read", "One board's facts with their history", "GET", f"/v1/jobs/{jid}/boards/DB1",
         query_string={"history": "true"}, headers=admin)
    send("json", "A site document's circuits merged into the job", "POST", f"/v1/jobs/{jid}/readings",
         json={"circuits": SITE_DOCUMENT["circuits"]}, headers=admin)
    send("csv", "A meter's CSV export merged into the job", "POST", f"/v1/jobs/{jid}/readings",
         data=READINGS_CSV.encode(), content_type="text/csv", headers=admin)
    send("lines", "A logger's key=value line: a later reading wins", "POST", f"/v1/jobs/{jid}/readings",
         data=READINGS_LINES.encode(), content_type="text/plain",
         headers={**admin, "Idempotency-Key": "lm-2031-logger-0001"})
    page = send("page", "Merged circuit records, two at a time", "GET", f"/v1/jobs/{jid}/circuits",
                query_string={"limit": 2}, headers=admin).get_json()
    send("history", "The next page, with every value each field had", "GET", f"/v1/jobs/{jid}/circuits",
         query_string={"limit": 2, "cursor": page["next_cursor"], "history": "true"}, headers=admin)
    send("external-ref", "A circuit's id in the office system", "PATCH", f"/v1/jobs/{jid}/circuits/DB1/3",
         json={"external_ref": "CRM-88412-3"}, headers=admin)
    verdicts = send("page", "Verdicts, two circuits at a time", "GET", f"/v1/jobs/{jid}/verdicts",
                    query_string={"limit": 2}, headers=admin)
    send("unchanged", "Nothing changed since that ETag", "GET", f"/v1/jobs/{jid}/verdicts",
         query_string={"limit": 2}, headers={**admin, "If-None-Match": verdicts.headers["ETag"]})
    send("since-last-visit", "What changed since the installation's previous visit", "GET",
         f"/v1/jobs/{jid}/changes", headers=admin)
    uploads = send("list", "Every body posted to the job", "GET", f"/v1/jobs/{jid}/uploads",
                   headers=admin).get_json()
    csv_upload = next(u for u in uploads["uploads"] if u["content_type"].startswith("text/csv"))
    send("csv", "The CSV exactly as it was received", "GET", f"/v1/jobs/{jid}/uploads/{csv_upload['id']}",
         headers=admin)
    wid = hook["id"]
    send("list", "The subscriptions", "GET", "/v1/webhooks", headers=admin)
    send("read", "One subscription", "GET", f"/v1/webhooks/{wid}", headers=admin)
    send("deliveries", "Deliveries waiting to be sent", "GET", f"/v1/webhooks/{wid}/deliveries",
         query_string={"limit": 3}, headers=admin)
    send("rotate", "A new secret; the old one signs beside it for ten minutes", "POST",
         f"/v1/webhooks/{wid}/secret", json={"overlap_s": 600}, headers=admin)
    send("delete", "The subscription and its deliveries removed", "DELETE", f"/v1/webhooks/{wid}",
         headers=admin)
    send("scrape", "Prometheus metrics (an admin key)", "GET", "/v1/metrics", headers=admin)
    send("page", "The API reference as a page", "GET", "/v1/docs")
    send("stylesheet", "Swagger UI's stylesheet, from this server", "GET", "/v1/docs/swagger-ui.css")
    return seen


@pytest.fixture
def hosts_resolve(monkeypatch: pytest.MonkeyPatch) -> None:
    """The example's webhook host (example.net, reserved for documentation) resolves to loopback."""
    real = socket.getaddrinfo
    monkeypatch.setattr(socket, "getaddrinfo", lambda host, port, *a, **k: real("127.0.0.1", port, *a, **k))


@pytest.fixture
def example_app(db_url: str, app_factory: Callable[..., Flask], hosts_resolve: None) -> Flask:
    return app_factory(db_url, OHMTALLY_AUTH="on", OHMTALLY_ENCRYPTION_KEY=Fernet.generate_key().decode(),
                       OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")


@pytest.fixture
def visited(example_app: Flask) -> Visit:
    admin = bearer(issue_key(example_app, unique_org("Larch Mews electrical"), "read,write,admin")[1])
    return visit(example_app.test_client(), admin)


def _operations(spec: dict[str, Any]) -> Iterator[tuple[str, str, dict[str, Any]]]:
    for path, item in spec["paths"].items():
        for method, operation in item.items():
            if isinstance(operation, dict) and "operationId" in operation:
                yield path, method, operation


@pytest.mark.skipif(not RECORD, reason="records the examples: set OHMTALLY_RECORD_EXAMPLES=1")
def test_record_the_examples(visited: Visit) -> None:
    """Write each operation's exchanges of the visit to api/openapi/examples/<operationId>.json."""
    FOLDER.mkdir(exist_ok=True)
    wanted = {op["operationId"] for _p, _m, op in _operations(visited.spec)}
    for stale in FOLDER.glob("*.json"):
        if stale.stem not in wanted:
            stale.unlink()
    for op_id, exchanges in visited.exchanges.items():
        document = {"operationId": op_id, "exchanges": [exchange_dict(*e) for e in exchanges]}
        text = json.dumps(document, indent=1, ensure_ascii=False) + "\n"
        (FOLDER / example_file_name(op_id)).write_text(text, encoding="utf-8")
    load_examples.cache_clear()


def test_every_operation_has_a_recorded_example(client: FlaskClient) -> None:
    """Each operation of the document has a file with an answer, and a request body where it takes one."""
    spec = client.get("/v1/openapi.json").get_json()
    recorded = load_examples()
    for _path, method, operation in _operations(spec):
        op_id = operation["operationId"]
        assert op_id in recorded, f"{method.upper()} {op_id}: no example; see this module's docstring"
        exchanges = recorded[op_id]["exchanges"]
        assert exchanges and all("status" in e["response"] for e in exchanges), op_id
        if "requestBody" in operation:
            assert any("body" in e["request"] for e in exchanges), f"{op_id}: no example request body"


def _validate(schema: dict[str, Any], spec: dict[str, Any], value: Any, where: str) -> None:
    validator = OAS31Validator({**schema, "components": spec["components"]},
                               format_checker=OAS31Validator.FORMAT_CHECKER)
    errors = list(validator.iter_errors(value))
    assert not errors, f"{where}: {errors[0].message} at /{'/'.join(map(str, errors[0].absolute_path))}"


def test_recorded_examples_fit_the_document(client: FlaskClient) -> None:
    """Every stored request fits its operation (parameters, body schema) and every answer its response."""
    spec = client.get("/v1/openapi.json").get_json()
    for op_id, recorded in load_examples().items():
        for exchange in recorded["exchanges"]:
            request, response = exchange["request"], exchange["response"]
            found = operation_for(spec, request["method"], request["path"])
            assert found is not None and found[1]["operationId"] == op_id, (op_id, request["path"])
            operation = found[1]
            declared = {p["name"] for p in operation.get("parameters", []) if "name" in p}
            assert set(request.get("query", {})) <= declared, (op_id, request.get("query"))
            if "body" in request:
                media = request["content_type"].split(";")[0]
                schema = operation["requestBody"]["content"][media]["schema"]
                if media.endswith("json"):
                    _validate(schema, spec, request["body"], f"{op_id} request")
            body = response.get("body")
            if isinstance(body, dict) and set(body) == {"external"}:
                raw = client.get(f"/v1/{body['external']}").get_data()
            elif isinstance(body, str):
                raw = body.encode()
            else:
                raw = b"" if body is None else json.dumps(body).encode()
            assert check_response(spec, request["method"], request["path"], response["status"],
                                  response.get("content_type"), raw), op_id


def test_the_visit_still_answers_as_recorded(visited: Visit) -> None:
    """Today's visit gives every recorded exchange, with the recorded status and media type."""
    recorded = load_examples()
    for op_id, exchanges in visited.exchanges.items():
        assert op_id in recorded, f"{op_id}: not recorded; see this module's docstring"
        stored = {e["name"]: e["response"] for e in recorded[op_id]["exchanges"]}
        for name, _summary, _sent, response in exchanges:
            assert name in stored, f"{op_id} {name}: not recorded"
            assert response.status_code == stored[name]["status"], (op_id, name)
            if stored[name].get("content_type"):
                assert response.mimetype == stored[name]["content_type"].split(";")[0], (op_id, name)


def test_the_served_document_shows_each_example(client: FlaskClient) -> None:
    """The document served carries every recorded answer as an Example Object, request bodies too."""
    spec = client.get("/v1/openapi.json").get_json()
    for path, method, operation in _operations(spec):
        recorded = load_examples()[operation["operationId"]]
        for exchange in recorded["exchanges"]:
            answer = operation["responses"][str(exchange["response"]["status"])]
            if "body" not in exchange["response"]:
                assert exchange["request"]["path"] in answer["description"], (path, method)
                continue
            media = exchange["response"]["content_type"].split(";")[0]
            content = answer["content"].get(media) or answer["content"]["*/*"]
            assert exchange["name"] in content["examples"], (path, method, exchange["name"])
            if "body" in exchange["request"]:
                sent = operation["requestBody"]["content"][exchange["request"]["content_type"].split(";")[0]]
                assert exchange["name"] in sent["examples"], (path, method)
