"""A delivery's info line reaches the same JSON log as the request lines (it used to vanish).

External references: the standard library's logging propagation rules (a record goes
to the handlers of its logger and of every ancestor up to one with propagate off);
each line is parsed with the standard library's json module.
"""

from __future__ import annotations

import io
import json
import logging
from collections.abc import Callable, Iterator

import pytest
from flask import Flask

from api.webhooks.delivery import LOGGER_NAME
from tests.api.test_webhooks import deliver, subscribe
from tests.api.webhook_receiver import Receiver


def _handlers_reached(name: str) -> list[logging.Handler]:
    """The handlers a record of logger ``name`` is written by, in the order logging calls them."""
    found: list[logging.Handler] = []
    logger: logging.Logger | None = logging.getLogger(name)
    while logger is not None:
        found.extend(logger.handlers)
        if not logger.propagate:
            break
        logger = logger.parent
    return found


@pytest.fixture
def json_log(db_url: str, app_factory: Callable[..., Flask]) -> Iterator[tuple[Flask, io.StringIO]]:
    """An app logging at INFO, and what its request log's handler writes (to the stream it was given,
    or, for a handler that writes to whatever sys.stderr is at the time, to pytest's capture)."""
    app = app_factory(db_url, OHMTALLY_LOG_LEVEL="INFO", OHMTALLY_WEBHOOK_ALLOW_PRIVATE="on")
    (handler,) = [h for h in _handlers_reached("ohmtally.api") if isinstance(h, logging.StreamHandler)]
    captured = io.StringIO()
    previous = handler.setStream(captured)
    try:
        yield app, captured
    finally:
        handler.setStream(previous)


def test_a_delivery_line_lands_in_the_request_log(json_log: tuple[Flask, io.StringIO], receiver: Receiver,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    """The webhook logger writes through the request log's handler; after a request and a delivery the
    log holds the request line and the delivery's info line, each one JSON object."""
    app, captured = json_log
    request_handlers = [h for h in _handlers_reached("ohmtally.api") if isinstance(h, logging.StreamHandler)]
    assert request_handlers and request_handlers[0] in _handlers_reached(LOGGER_NAME)
    client = app.test_client()
    subscribe(client, receiver.url, ["job.created"])
    client.post("/v1/jobs", json={"reference": "G-1", "site": "Invented site"})
    assert deliver(app) == 1
    written = captured.getvalue() + capsys.readouterr().err
    lines = [json.loads(line) for line in written.splitlines() if line.startswith("{")]
    assert any(line["message"] == "request" for line in lines)
    (sent,) = [line for line in lines if line["message"].startswith("webhook delivery ")]
    assert sent["logger"] == LOGGER_NAME and sent["level"] == "info"
    assert "delivered after 1 attempt(s): HTTP 204" in sent["message"]
