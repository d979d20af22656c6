"""examples/deploy: the compose file, nginx config and Prometheus config agree with each other and with
the settings and commands this build really has (Docker cannot run here, so the structure is checked).

The compose file is read with PyYAML; the nginx config with crossplane (NGINX's own configuration
parser, the one its tooling uses); commands with ohmtally's own argument parser.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import crossplane
import yaml

from api.cli import build_parser
from api.settings import SETTINGS, load_settings

DEPLOY = Path(__file__).resolve().parents[2] / "examples" / "deploy"
APPS = ("app1", "app2")


def _compose() -> dict[str, Any]:
    loaded: dict[str, Any] = yaml.safe_load((DEPLOY / "compose.yaml").read_text())
    return loaded


def _nginx() -> list[dict[str, Any]]:
    parsed = crossplane.parse(str(DEPLOY / "nginx.conf"), single=True, comments=False)
    assert parsed["status"] == "ok", parsed["errors"]
    found: list[dict[str, Any]] = parsed["config"][0]["parsed"]
    return found


def _find(block: list[dict[str, Any]], name: str, *args: str) -> dict[str, Any]:
    """The directive ``name`` (with these first arguments) anywhere in ``block``."""
    for directive in block:
        if directive["directive"] == name and directive["args"][:len(args)] == list(args):
            return directive
        found = _find(directive.get("block", []), name, *args) if "block" in directive else None
        if found:
            return found
    return {}


def _all(block: list[dict[str, Any]], name: str) -> list[dict[str, Any]]:
    out = []
    for directive in block:
        if directive["directive"] == name:
            out.append(directive)
        out.extend(_all(directive.get("block", []), name))
    return out


def test_both_instances_read_the_same_settings_all_real() -> None:
    """app1 and app2 take one environment; every OHMTALLY_ name in it is a setting of api/settings.py,
    and its values load (load_settings accepts them)."""
    services = _compose()["services"]
    environments = [services[name]["environment"] for name in APPS]
    assert environments[0] == environments[1] == services["migrate"]["environment"]
    known = {f"OHMTALLY_{setting.name}" for setting in SETTINGS}
    names = set(environments[0])
    assert names <= known, names - known
    # the compose file interpolates secrets from the shell; stand in for them to load the rest
    values = {k: v for k, v in environments[0].items() if "${" not in str(v)}
    settings = load_settings(values, environ={})
    assert settings.auth  # serve refuses OHMTALLY_AUTH=off on 0.0.0.0
    assert settings.rate_limit_storage.startswith("redis://redis:")  # one count for both instances
    assert "@postgres:5432/" in environments[0]["OHMTALLY_DATABASE_URL"]
    assert "${OHMTALLY_ENCRYPTION_KEY" in environments[0]["OHMTALLY_ENCRYPTION_KEY"]


def test_the_proxy_count_matches_the_proxies_in_front() -> None:
    """OHMTALLY_TRUSTED_PROXIES is the number of proxies between clients and the instances: nginx only."""
    services = _compose()["services"]
    proxies = [name for name, service in services.items()
               if str(service.get("image", "")).startswith("nginx")]
    assert proxies == ["proxy"]
    for name in APPS:
        assert int(services[name]["environment"]["OHMTALLY_TRUSTED_PROXIES"]) == len(proxies)
    location = _find(_nginx(), "location", "/v1/")
    headers = {tuple(d["args"]) for d in _all(location["block"], "proxy_set_header")}
    assert ("X-Forwarded-For", "$proxy_add_x_forwarded_for") in headers  # appends: ProxyFix reads the last
    assert ("X-Forwarded-Proto", "$scheme") in headers and ("X-Forwarded-Host", "$host") in headers


def test_the_upstream_is_every_instance_on_its_bind() -> None:
    """nginx's upstream lists exactly the app services, on the port their `ohmtally serve --bind` names;
    those commands parse with ohmtally's own parser."""
    services = _compose()["services"]
    ports = set()
    for name in APPS:
        command = services[name]["command"]
        assert command[0] == "ohmtally"
        args = build_parser("serve").parse_args(command[1:])
        assert args.command == "serve" and args.workers >= 2
        ports.add(f"{name}:{args.bind.rsplit(':', 1)[1]}")
    upstream = _find(_nginx(), "upstream", "ohmtally")
    assert {d["args"][0] for d in upstream["block"] if d["directive"] == "server"} == ports
    assert build_parser("db").parse_args(services["migrate"]["command"][1:]).db_command == "upgrade"


def test_instances_wait_for_the_migration_and_report_readiness() -> None:
    """The instances start after `ohmtally db upgrade` succeeded, and their health check asks /v1/ready."""
    services = _compose()["services"]
    for name in APPS:
        assert services[name]["depends_on"]["migrate"]["condition"] == "service_completed_successfully"
        assert "/v1/ready" in " ".join(services[name]["healthcheck"]["test"])


def test_nginx_limits_match_the_servers() -> None:
    """nginx lets through the largest upload ohmtally takes and waits longer than its request timeout;
    it does not recompress, and /v1/metrics is not served through the balancer."""
    config = _nginx()
    defaults = load_settings({}, environ={})
    body = _find(config, "client_max_body_size")["args"][0]
    assert body.endswith("m") and int(body[:-1]) * 1024 * 1024 > defaults.max_upload_bytes
    read_timeout = _find(config, "proxy_read_timeout")["args"][0]
    environment = _compose()["services"]["app1"]["environment"]
    assert int(read_timeout.rstrip("s")) > int(environment["OHMTALLY_REQUEST_TIMEOUT_S"])
    assert _find(config, "gzip")["args"] == ["off"]
    metrics = _find(config, "location", "=", "/v1/metrics")
    assert _find(metrics["block"], "return")["args"] == ["404"]


def test_prometheus_scrapes_each_instance_with_a_key() -> None:
    """Prometheus scrapes app1 and app2 themselves (counts are per instance) at /v1/metrics, with a key."""
    config = yaml.safe_load((DEPLOY / "prometheus.yml").read_text())
    job = config["scrape_configs"][0]
    assert job["metrics_path"] == "/v1/metrics"
    assert job["authorization"]["type"] == "Bearer" and job["authorization"]["credentials_file"]
    assert sorted(job["static_configs"][0]["targets"]) == [f"{name}:8000" for name in APPS]
