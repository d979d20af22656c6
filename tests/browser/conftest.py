"""Fixtures for the tests in a real browser.

- ``chromium`` (session): Debian's Chromium and chromedriver, installed with apt-get where
  missing and possible (:func:`tests.browser.chromium.ensure_chromium`), else every test
  that needs it is skipped with the reason.
- ``browser`` (session): one headless Chromium (fresh profile, closed-network flags).
  :func:`network_log` drains its network log; :func:`visit` opens a URL with the log
  drained first, so the log holds that page's requests only.
- ``served`` (session): the real app (``OHMTALLY_AUTH=off``) on werkzeug's threaded
  server on a free loopback port, on a freshly migrated SQLite file.
- ``output_dir``: ``tests/browser/output/`` (ignored by git), where screenshots and PDFs
  are kept for a person to look at; the run's summary lists what was written there.
"""

from __future__ import annotations

import json
import threading
from collections.abc import Iterator
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import pytest
from selenium import webdriver
from werkzeug.serving import make_server

from api.app import create_app
from api.db.schema import upgrade
from tests.browser.chromium import ensure_chromium, start_chromium

OUTPUT = Path(__file__).resolve().parent / "output"
WRITTEN: list[Path] = []


@pytest.fixture(scope="session")
def chromium() -> None:
    reason = ensure_chromium()
    if reason is not None:
        pytest.skip(reason)


@pytest.fixture(scope="session")
def browser(chromium: None, tmp_path_factory: pytest.TempPathFactory) -> Iterator[webdriver.Chrome]:
    driver = start_chromium(tmp_path_factory.mktemp("chromium-profile"))
    try:
        yield driver
    finally:
        driver.quit()


class Served:
    """The app on a loopback port: ``url(path)`` and its ``origin``."""

    def __init__(self, origin: str) -> None:
        self.origin = origin

    def url(self, path: str) -> str:
        return self.origin + path


@pytest.fixture(scope="session")
def served(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Served]:
    folder = tmp_path_factory.mktemp("served")
    url = f"sqlite:///{folder / 'ohmtally.sqlite3'}"
    upgrade(url)
    app = create_app({"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "off", "OHMTALLY_LOG_LEVEL": "WARNING",
                      "OHMTALLY_INSTANCE_PATH": str(folder)})
    server = make_server("127.0.0.1", 0, app, threaded=True)
    thread = threading.Thread(target=server.serve_forever, name="browser-test-server", daemon=True)
    thread.start()
    try:
        yield Served(f"http://127.0.0.1:{server.server_port}")
    finally:
        server.shutdown()
        thread.join(timeout=10)
        app.extensions["ohmtally.engine"].dispose()


@pytest.fixture
def output_dir() -> Path:
    OUTPUT.mkdir(exist_ok=True)
    return OUTPUT


def keep(path: Path) -> Path:
    """Note a file written for a person to look at (listed at the end of the run)."""
    WRITTEN.append(path)
    return path


def network_log(driver: webdriver.Chrome) -> list[dict[str, Any]]:
    """The requests the browser started since the last call (Chrome DevTools Network.requestWillBeSent)."""
    sent = []
    for entry in driver.get_log("performance"):
        message = json.loads(entry["message"])["message"]
        if message.get("method") == "Network.requestWillBeSent":
            sent.append(message["params"])
    return sent


def visit(driver: webdriver.Chrome, url: str, *, javascript: bool = True) -> None:
    network_log(driver)
    driver.get_log("browser")
    driver.execute_cdp_cmd("Emulation.setScriptExecutionDisabled", {"value": not javascript})
    driver.get(url)


def off_origin(requests: list[dict[str, Any]], origin: str) -> list[str]:
    """URLs of requests that went over the network to anywhere but ``origin`` (data: and blob: stay
    inside the page; chrome: is the browser's own)."""
    away = []
    for request in requests:
        url = request["request"]["url"]
        scheme = urlsplit(url).scheme
        if scheme in ("data", "blob", "about", "chrome", "chrome-extension", "devtools"):
            continue
        parts = urlsplit(url)
        if f"{parts.scheme}://{parts.netloc}" != origin:
            away.append(url)
    return away


def pytest_terminal_summary(terminalreporter: Any) -> None:
    if WRITTEN:
        terminalreporter.write_sep("-", "browser test output")
        for path in WRITTEN:
            terminalreporter.write_line(str(path))
