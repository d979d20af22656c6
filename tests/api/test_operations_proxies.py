"""Trusted proxies: with OHMTALLY_TRUSTED_PROXIES=n the client's address, scheme and host come from
the n-th X-Forwarded-* value from the right (werkzeug's ProxyFix); with 0 the headers are ignored.

The addresses are from the documentation ranges of RFC 5737 (192.0.2.0/24, 198.51.100.0/24,
203.0.113.0/24): header values only, never contacted.
"""

from __future__ import annotations

from collections.abc import Callable

import pytest
from flask import Flask, jsonify, request
from flask.testing import FlaskClient

from api.settings import SettingsError, load_settings


def _probe(app: Flask) -> FlaskClient:
    """A plain client of ``app`` with a probe route that echoes what the app believes of the request
    (added for the test, so not in the OpenAPI document)."""
    app.add_url_rule("/probe", "probe", lambda: jsonify(addr=request.remote_addr, scheme=request.scheme,
                                                         host=request.host))
    app.test_client_class = FlaskClient
    return app.test_client()


def test_without_trusted_proxies_forwarded_headers_are_ignored(db_url: str,
                                                               app_factory: Callable[..., Flask]) -> None:
    """Default 0: a client writing X-Forwarded-For cannot choose its own address, scheme or host."""
    client = _probe(app_factory(db_url))
    seen = client.get("/probe", headers={"X-Forwarded-For": "192.0.2.10", "X-Forwarded-Proto": "https",
                                         "X-Forwarded-Host": "api.example.test"}).get_json()
    assert seen == {"addr": "127.0.0.1", "scheme": "http", "host": "localhost"}


def test_one_trusted_proxy_gives_the_client_it_saw(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """With 1: the rightmost X-Forwarded-For value (the one nginx appended) is the client; a value the
    client itself put in front of it is not believed."""
    client = _probe(app_factory(db_url, OHMTALLY_TRUSTED_PROXIES="1"))
    seen = client.get("/probe", headers={"X-Forwarded-For": "192.0.2.66, 203.0.113.7",
                                         "X-Forwarded-Proto": "https",
                                         "X-Forwarded-Host": "api.example.test"}).get_json()
    assert seen == {"addr": "203.0.113.7", "scheme": "https", "host": "api.example.test"}


def test_two_trusted_proxies_take_the_second_from_the_right(db_url: str,
                                                            app_factory: Callable[..., Flask]) -> None:
    """With 2 (a load balancer, then nginx): the client is the second value from the right."""
    client = _probe(app_factory(db_url, OHMTALLY_TRUSTED_PROXIES="2"))
    seen = client.get("/probe", headers={"X-Forwarded-For": "192.0.2.66, 198.51.100.20, 10.0.0.5"}).get_json()
    assert seen["addr"] == "198.51.100.20"


def test_the_rate_limit_counts_per_forwarded_client(db_url: str, app_factory: Callable[..., Flask]) -> None:
    """Auth off, limit 3/minute: behind one trusted proxy two clients have a budget each; with no
    trusted proxy every request is the proxy's and they share one."""
    def statuses(client: FlaskClient) -> list[int]:
        return [client.get("/v1/jobs", headers={"X-Forwarded-For": f"198.51.100.{n % 2 + 1}"}).status_code
                for n in range(6)]

    behind = app_factory(db_url, OHMTALLY_TRUSTED_PROXIES="1", OHMTALLY_RATE_LIMIT="3/minute").test_client()
    assert statuses(behind) == [200] * 6
    direct = app_factory(db_url, OHMTALLY_RATE_LIMIT="3/minute").test_client()
    assert statuses(direct) == [200, 200, 200, 429, 429, 429]


@pytest.mark.parametrize("text", ["-1", "one", "1.5"])
def test_a_bad_proxy_count_is_refused_at_start(text: str) -> None:
    """OHMTALLY_TRUSTED_PROXIES must be a whole number ≥ 0: anything else stops start-up with its name."""
    with pytest.raises(SettingsError, match="OHMTALLY_TRUSTED_PROXIES"):
        load_settings({"OHMTALLY_TRUSTED_PROXIES": text}, environ={})


def test_the_default_is_no_proxy() -> None:
    """Nothing set: 0 trusted proxies."""
    assert load_settings({}, environ={}).trusted_proxies == 0
