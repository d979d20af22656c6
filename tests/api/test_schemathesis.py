"""Fuzzing the API from its own OpenAPI document (schemathesis, in-process WSGI, keys on).

Every operation the document lists gets a bounded number of generated
requests (valid and invalid), sent with an admin key of its own
organisation; no answer may be a 5xx, and every answer must fit the
document (status documented, content type and body schema as declared).
The bound keeps the run under a minute in CI; a marked slow test runs a higher bound
on SQLite and PostgreSQL when asked for (``OHMTALLY_FUZZ_SLOW=1``).
"""

from __future__ import annotations

import os
import time

import pytest
import schemathesis
from flask import Flask
from hypothesis import HealthCheck, given, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    response_schema_conformance,
    status_code_conformance,
)

from tests.api.keyring import bearer, issue_key, unique_org

MAX_EXAMPLES = int(os.environ.get("OHMTALLY_FUZZ_EXAMPLES", "25"))  # CI bound; raise it to explore
# The slow run: opt in with OHMTALLY_FUZZ_SLOW=1 (CI keeps the bound above, within its time budget).
SLOW_EXAMPLES = int(os.environ.get("OHMTALLY_FUZZ_SLOW_EXAMPLES", "250"))
CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance, response_schema_conformance]


def _fuzz(auth_app: Flask, examples: int) -> float:
    """Every documented operation, ``examples`` generated requests each; the seconds it took."""
    # identity: schemathesis calls the app directly and does not decode a compressed body
    headers = {**bearer(issue_key(auth_app, unique_org("fuzz"), "read,write,admin")[1]),
               "Accept-Encoding": "identity"}
    client = auth_app.test_client()
    job = client.post("/v1/jobs", json={"reference": "FUZZ", "site": "fuzz"}, headers=headers).get_json()
    client.post(f"/v1/jobs/{job['id']}/readings?adapter=lines", data=b"board=DB1 circuit=1 zs=0.4\n",
                content_type="text/plain", headers=headers)
    schema = schemathesis.openapi.from_wsgi("/v1/openapi.json", auth_app)
    operations = [result.ok() for result in schema.get_all_operations()]
    assert len(operations) >= 12  # health, verify, rulesets, adapters, jobs and their sub-resources
    started = time.monotonic()
    for operation in operations:
        @given(case=operation.as_strategy())
        @settings(max_examples=examples, deadline=None, database=None,
                  suppress_health_check=list(HealthCheck))
        def fuzz(case: schemathesis.Case) -> None:
            case.call_and_validate(headers=headers, checks=CHECKS)

        try:
            fuzz()
        except Exception as exc:  # name the operation in the failure
            pytest.fail(f"{operation.method.upper()} {operation.path}: {exc}")
    return time.monotonic() - started


def test_no_operation_answers_5xx_or_off_schema(auth_app: Flask) -> None:
    """Generated requests to every documented operation: no 5xx, every response as the document says."""
    elapsed = _fuzz(auth_app, MAX_EXAMPLES)
    assert MAX_EXAMPLES > 25 or elapsed < 60


@pytest.mark.slow
@pytest.mark.postgres
@pytest.mark.skipif(os.environ.get("OHMTALLY_FUZZ_SLOW") != "1",
                    reason="the long fuzz run: set OHMTALLY_FUZZ_SLOW=1 (and OHMTALLY_FUZZ_SLOW_EXAMPLES)")
def test_a_long_fuzz_run_finds_no_5xx(auth_app: Flask, backend: str) -> None:
    """SLOW_EXAMPLES (default 250) generated requests per operation, on SQLite and PostgreSQL: 0 × 5xx."""
    _fuzz(auth_app, SLOW_EXAMPLES)
