"""JSON logs: one configuration for every ``ohmtally`` logger, a request id inside a request.

The webhooks logger's lines are read as an operator would: from the standard error
of a separate Python process that built the app and logged, one JSON object a line.
"""

from __future__ import annotations

import json
import logging
import subprocess
import sys
import textwrap
from collections.abc import Callable
from pathlib import Path

import pytest
from flask import Flask

ROOT = Path(__file__).resolve().parents[2]

_LOGGING_PROCESS = textwrap.dedent("""
    import logging, sys
    from api.app import create_app
    create_app({"OHMTALLY_DATABASE_URL": sys.argv[1], "OHMTALLY_AUTH": "off",
                "OHMTALLY_LOG_LEVEL": sys.argv[2], "OHMTALLY_INSTANCE_PATH": sys.argv[3]})
    logging.getLogger("ohmtally.webhooks").info("webhook delivery", extra={"delivery_id": 7,
                                                                            "status": "delivered"})
    logging.getLogger("ohmtally.capture").warning("spool nearly full")
    logging.getLogger("ohmtally.webhooks").debug("only at DEBUG")
""")


def _lines(url: str, level: str, folder: Path) -> list[dict[str, object]]:
    done = subprocess.run([sys.executable, "-c", _LOGGING_PROCESS, url, level, str(folder)], cwd=ROOT,
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr[-2000:]
    return [json.loads(line) for line in done.stderr.splitlines() if line.strip()]


def test_webhook_info_lines_appear_as_json(db_url: str, tmp_path: Path) -> None:
    """At INFO, ohmtally.webhooks' info line and ohmtally.capture's warning are JSON lines on stderr,
    with their extra fields; the debug line is not written."""
    lines = _lines(db_url, "INFO", tmp_path)
    delivery = next(line for line in lines if line["logger"] == "ohmtally.webhooks")
    assert delivery["level"] == "info" and delivery["message"] == "webhook delivery"
    assert delivery["delivery_id"] == 7 and delivery["status"] == "delivered"
    assert str(delivery["time"]).endswith("Z")
    assert any(line["logger"] == "ohmtally.capture" and line["level"] == "warning" for line in lines)
    assert not any(line["message"] == "only at DEBUG" for line in lines)


def test_the_level_setting_governs_every_ohmtally_logger(db_url: str, tmp_path: Path) -> None:
    """At WARNING the webhooks info line is not written, the capture warning is."""
    lines = _lines(db_url, "WARNING", tmp_path)
    assert [line["logger"] for line in lines] == ["ohmtally.capture"]


def test_a_line_logged_during_a_request_names_its_request_id(app: Flask,
                                                             capsys: pytest.CaptureFixture[str]) -> None:
    """A line from ohmtally.webhooks written inside a request carries that request's id, and the
    request line says its route (the URL rule) and the client's address."""
    root = logging.getLogger("ohmtally")
    root.setLevel(logging.INFO)
    try:
        with app.test_request_context("/v1/health", headers={"X-Request-Id": "hook-42"}):
            app.preprocess_request()
            logging.getLogger("ohmtally.webhooks").info("sent from a request")
        app.test_client().get("/v1/health", headers={"X-Request-Id": "req-9"})
    finally:
        root.setLevel(logging.WARNING)
    written = [json.loads(line) for line in capsys.readouterr().err.splitlines() if line.startswith("{")]
    inside = next(line for line in written if line["message"] == "sent from a request")
    assert inside["request_id"] == "hook-42" and inside["logger"] == "ohmtally.webhooks"
    request_line = next(line for line in written if line.get("request_id") == "req-9")
    assert request_line["route"] == "/v1/health" and request_line["status"] == 200
    assert request_line["remote_addr"] == "127.0.0.1"


def test_configuring_twice_writes_each_line_once(db_url: str, app_factory: Callable[..., Flask],
                                                 capsys: pytest.CaptureFixture[str]) -> None:
    """Two apps built in one process share the one handler: a line is written once, not twice."""
    app_factory(db_url, OHMTALLY_LOG_LEVEL="INFO")
    app_factory(db_url, OHMTALLY_LOG_LEVEL="INFO")
    capsys.readouterr()
    logging.getLogger("ohmtally.webhooks").info("once only")
    err = capsys.readouterr().err
    assert err.count("once only") == 1
