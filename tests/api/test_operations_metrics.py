"""``GET /v1/metrics``: Prometheus text a scraper parses, counts that follow what the API did.

The exposition is parsed with prometheus-client's own parser, as a scraper would.
Counters are process-wide (one registry per process), so each test compares the
counts after its requests with the counts before them.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient
from prometheus_client.parser import text_string_to_metric_families
from sqlalchemy import func, select

from api.db.models import WebhookDelivery
from api.db.schema import schema_window
from engine import __version__
from tests.api.keyring import bearer, issue_key, unique_org
from tests.api.webhook_receiver import ALL_EVENTS

pytestmark = pytest.mark.postgres
DEMO_SITE = Path(__file__).resolve().parents[2] / "examples" / "demo-site.json"
Samples = dict[tuple[str, frozenset[tuple[str, str]]], float]


def scrape(client: FlaskClient, **headers: str) -> Samples:
    response = client.get("/v1/metrics", headers=headers)
    assert response.status_code == 200, response.get_data()[:300]
    assert response.mimetype == "text/plain"
    found: Samples = {}
    for family in text_string_to_metric_families(response.get_data(as_text=True)):
        for sample in family.samples:
            found[(sample.name, frozenset(sample.labels.items()))] = sample.value
    return found


def value(samples: Samples, name: str, **labels: str) -> float:
    return samples.get((name, frozenset(labels.items())), 0.0)


def readings_rule(client: FlaskClient) -> str:
    """The readings route's URL rule, as the app declares it (the label a scraper sees)."""
    return next(rule.rule for rule in client.application.url_map.iter_rules()
                if rule.rule.startswith("/v1/jobs/") and rule.rule.endswith("/readings"))


def _job(client: FlaskClient) -> int:
    made = client.post("/v1/jobs", json={"reference": "M1", "site": "Invented site"})
    assert made.status_code == 201
    job_id: int = made.get_json()["id"]
    return job_id


def test_requests_are_counted_by_route_never_by_raw_path(client: FlaskClient) -> None:
    """Two readings posts to two jobs add 2 to the URL rule's count; no label holds a job id."""
    first, second = _job(client), _job(client)
    before = scrape(client)
    for job_id in (first, second):
        posted = client.post(f"/v1/jobs/{job_id}/readings", data="board,circuit,zs_ohm\nDB1,1,0.4\n",
                             content_type="text/csv")
        assert posted.status_code == 200
    after = scrape(client)
    name = "ohmtally_http_requests_total"
    rule = readings_rule(client)
    labels = {"method": "POST", "route": rule, "status": "200"}
    assert value(after, name, **labels) - value(before, name, **labels) == 2
    latency = "ohmtally_http_request_duration_seconds_count"
    assert value(after, latency, method="POST", route=rule) - value(
        before, latency, method="POST", route=rule) == 2
    for _name, label_set in after:
        assert all(f"/jobs/{first}" not in v and f"/jobs/{second}" not in v for _k, v in label_set)


def test_unmatched_paths_share_one_label(client: FlaskClient) -> None:
    """Requests to paths no route matches are counted under <unmatched>, whatever the path."""
    before = scrape(client)
    for path in ("/v1/nothing/1", "/v1/nothing/2", "/wp-login.php"):
        assert client.get(path).status_code == 404
    after = scrape(client)
    labels = {"method": "GET", "route": "<unmatched>", "status": "404"}
    assert value(after, "ohmtally_http_requests_total", **labels) - value(
        before, "ohmtally_http_requests_total", **labels) == 3


def test_uploads_count_merged_and_rejected_but_not_rolled_back(client: FlaskClient) -> None:
    """A merged upload +1 merged; a refused body kept as rejected +1 rejected; a 404 post and a
    keyed replay add nothing."""
    job_id = _job(client)
    before = scrape(client)
    merged = client.post(f"/v1/jobs/{job_id}/readings", data="board,circuit,zs_ohm\nDB1,1,0.4\n",
                         content_type="text/csv", headers={"Idempotency-Key": "metrics-1"})
    assert merged.status_code == 200
    replay = client.post(f"/v1/jobs/{job_id}/readings", data="board,circuit,zs_ohm\nDB1,1,0.4\n",
                         content_type="text/csv", headers={"Idempotency-Key": "metrics-1"})
    assert replay.status_code == 200 and replay.get_data() == merged.get_data()
    refused = client.post(f"/v1/jobs/{job_id}/readings", data=b"{not json", content_type="application/json")
    assert refused.status_code >= 400 and "upload" in refused.get_json()
    assert client.post("/v1/jobs/999999/readings", data="board,circuit\nA,1\n",
                       content_type="text/csv").status_code == 404
    after = scrape(client)
    assert value(after, "ohmtally_uploads_total", status="merged") - value(
        before, "ohmtally_uploads_total", status="merged") == 1
    assert value(after, "ohmtally_uploads_total", status="rejected") - value(
        before, "ohmtally_uploads_total", status="rejected") == 1


def test_verdict_outcomes_are_counted_as_answered(client: FlaskClient) -> None:
    """POST /v1/verify of the demo site: the outcome counts added equal the outcomes in the answer."""
    before = scrape(client)
    answer = client.post("/v1/verify", data=DEMO_SITE.read_bytes(), content_type="application/json")
    assert answer.status_code == 200
    outcomes = Counter(v["outcome"] for v in answer.get_json()["verdicts"])
    assert len(outcomes) >= 2  # the job shows more than one outcome, so the labels are tested
    after = scrape(client)
    for outcome, count in outcomes.items():
        labels = {"route": "/v1/verify", "outcome": outcome}
        assert value(after, "ohmtally_verdicts_total", **labels) - value(
            before, "ohmtally_verdicts_total", **labels) == count


def test_webhook_backlog_is_read_from_the_database(hook_app: Flask, hooks: FlaskClient) -> None:
    """Pending deliveries at scrape time equal the rows the database holds as pending."""
    made = hooks.post("/v1/webhooks", json={"url": "http://127.0.0.1:9/never", "events": ALL_EVENTS})
    assert made.status_code == 201
    job_id = _job(hooks)
    hooks.post(f"/v1/jobs/{job_id}/readings", data="board,circuit,zs_ohm\nDB1,1,0.4\n",
               content_type="text/csv")
    samples = scrape(hooks)
    with hook_app.app_context():
        session = hook_app.extensions["ohmtally.db"]()
        pending = session.scalar(select(func.count()).select_from(WebhookDelivery)
                                 .where(WebhookDelivery.status == "pending"))
        session.close()
    assert pending is not None and pending >= 2  # job.created and readings.accepted at least
    assert value(samples, "ohmtally_webhook_deliveries_pending") == pending
    assert value(samples, "ohmtally_webhook_oldest_pending_seconds") >= 0
    assert value(samples, "ohmtally_database_up") == 1


def test_metrics_need_an_admin_key(auth_app: Flask) -> None:
    """With keys on: a read,write key gets 403 insufficient_scope; an admin key gets the metrics."""
    org = unique_org()
    _id, plain = issue_key(auth_app, org, "read,write")
    _id, admin = issue_key(auth_app, org, "admin")
    client = auth_app.test_client()
    refused = client.get("/v1/metrics", headers=bearer(plain))
    assert refused.status_code == 403 and refused.get_json()["code"] == "insufficient_scope"
    samples = scrape(client, **bearer(admin))
    assert value(samples, "ohmtally_database_up") == 1


def test_metrics_name_the_build(client: FlaskClient) -> None:
    """ohmtally_build_info carries the package version and the schema head, so a rolling deploy shows."""
    samples = scrape(client)
    assert value(samples, "ohmtally_build_info", version=__version__,
                 code_revision=schema_window().head) == 1
