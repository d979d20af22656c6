"""``GET /v1/docs``: the API reference page, open without a key, every file from this server.

External references:
- The HTML the server sends, read with the standard library's ``html.parser``: every
  ``src`` and ``href`` must be a same-origin (relative) URL or a ``data:`` URL.
- Swagger UI's stylesheet as the package ships it: every ``url(…)`` in it is a ``data:`` URL.
- CSP Level 3 §2.3.1 hash-source for the one inline script (hashlib, base64).
- Headless Chromium renders the page from a served app, with the DevTools network log:
  no request may leave the server's origin (RFC 6454 origin: scheme, host, port).
"""

from __future__ import annotations

import hashlib
import re
from base64 import b64encode
from collections.abc import Iterator
from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import urlsplit

import httpx
import pytest
from flask import Flask
from selenium import webdriver
from selenium.webdriver.common.by import By
from selenium.webdriver.support.wait import WebDriverWait

from api.app import create_app
from api.db.schema import upgrade
from api.http.auth import PUBLIC_PATHS
from api.routes.docs import ASSETS, PAGE_CSP
from tests.browser.conftest import Served, keep, network_log, off_origin, visit


@pytest.fixture(scope="module")
def app(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Flask]:
    """An app with API keys required (OHMTALLY_AUTH=on), as in production."""
    folder = tmp_path_factory.mktemp("docs")
    url = f"sqlite:///{folder / 'ohmtally.sqlite3'}"
    upgrade(url)
    made = create_app({"OHMTALLY_DATABASE_URL": url, "OHMTALLY_AUTH": "on", "OHMTALLY_LOG_LEVEL": "WARNING",
                       "OHMTALLY_INSTANCE_PATH": str(folder), "TESTING": True})
    yield made
    made.extensions["ohmtally.engine"].dispose()


class Links(HTMLParser):
    def __init__(self, text: str) -> None:
        super().__init__()
        self.urls: list[str] = []
        self.scripts: list[str] = []
        self._in_script = False
        self.feed(text)

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.urls += [value or "" for name, value in attrs if name in ("src", "href", "action", "srcset")]
        self._in_script = tag == "script"

    def handle_data(self, data: str) -> None:
        if self._in_script and data.strip():
            self.scripts.append(data)

    def handle_endtag(self, tag: str) -> None:
        self._in_script = False


def test_page_and_files_need_no_key(app: Flask) -> None:
    """With OHMTALLY_AUTH=on the page and both files answer 200 without a key (like /v1/openapi.json),
    each with its own media type; any other route still asks for a key."""
    client = app.test_client()
    page = client.get("/v1/docs")
    assert page.status_code == 200 and page.mimetype == "text/html"
    for name, media in ASSETS.items():
        got = client.get(f"/v1/docs/{name}")
        assert got.status_code == 200 and got.content_type == media and len(got.data) > 10_000
        assert got.headers["X-Content-Type-Options"] == "nosniff"
    assert client.get("/v1/jobs").status_code == 401


def test_every_docs_route_is_public_and_in_the_openapi_document(app: Flask) -> None:
    """Each path the docs routes answer is in PUBLIC_PATHS, and the document lists both operations with
    security [] (no key)."""
    served = {"/v1/docs", *(f"/v1/docs/{name}" for name in ASSETS)}
    rules = {r.rule for r in app.url_map.iter_rules() if r.rule.startswith("/v1/docs")}
    assert len(rules) == 2 and served <= PUBLIC_PATHS
    spec = app.test_client().get("/v1/openapi.json").get_json()
    assert spec["paths"]["/v1/docs"]["get"]["security"] == []
    assert spec["paths"]["/v1/docs/{asset}"]["get"]["security"] == []
    assert spec["paths"]["/v1/docs/{asset}"]["parameters"][0]["schema"]["enum"] == list(ASSETS)


def test_page_links_only_to_its_own_server(app: Flask) -> None:
    """Every src/href of the page is relative (same origin) or data:; the stylesheet's url()s are all
    data:; the inline script is allowed by its hash, not by 'unsafe-inline'."""
    client = app.test_client()
    page = client.get("/v1/docs")
    links = Links(page.get_data(as_text=True))
    assert links.urls and all(not urlsplit(u).netloc and (not urlsplit(u).scheme or u.startswith("data:"))
                              for u in links.urls), links.urls
    css = client.get("/v1/docs/swagger-ui.css").get_data(as_text=True)
    urls = re.findall(r"url\(\s*['\"]?([^'\")]*)", css)
    assert urls and all(u.startswith("data:") for u in urls)
    assert "@import" not in css
    csp = page.headers["Content-Security-Policy"]
    assert csp == PAGE_CSP and "unsafe-inline" not in csp and "unsafe-eval" not in csp
    (script,) = links.scripts
    digest = b64encode(hashlib.sha256(script.encode()).digest()).decode()
    assert f"'sha256-{digest}'" in csp
    for directive in ("script-src", "style-src", "img-src", "connect-src", "font-src"):
        sources = re.search(directive + r" ([^;]*)", csp)
        assert sources is not None
        assert {s for s in sources.group(1).split() if not s.startswith("'sha256-")} <= {"'self'", "data:"}


def test_files_are_cached_and_revalidated(app: Flask, served: Served) -> None:
    """A file comes with an ETag; asking again with it answers 304 and no body; a name that is not one of
    the files is a 404 problem (the package's other files are not served)."""
    client = app.test_client()
    first = client.get("/v1/docs/swagger-ui-bundle.js")
    again = client.get("/v1/docs/swagger-ui-bundle.js", headers={"If-None-Match": first.headers["ETag"]})
    assert again.status_code == 304 and again.data == b""
    assert "max-age=3600" in first.headers["Cache-Control"]
    for other in ("swagger-ui.js", "LICENSE", "../__init__.py", "%2e%2e/flask_swagger_ui.py"):
        missing = httpx.get(served.url(f"/v1/docs/{other}"))
        assert missing.status_code == 404 and missing.headers["Content-Type"] == "application/problem+json"


@pytest.mark.browser
def test_reference_loads_in_the_browser_without_leaving_the_server(browser: webdriver.Chrome, served: Served,
                                                                   output_dir: Path) -> None:
    """In Chromium the page lists the operations (POST /v1/verify among them), every request the page made
    went to the server's own origin, and the browser refused nothing under the page's CSP."""
    spec = httpx.get(served.url("/v1/openapi.json")).json()
    operations = sum(len([m for m in item if m in ("get", "post", "put", "patch", "delete")])
                     for item in spec["paths"].values())
    visit(browser, served.url("/v1/docs"))
    WebDriverWait(browser, 30).until(
        lambda d: len(d.find_elements(By.CSS_SELECTOR, ".opblock")) >= operations)
    shown = {(b.find_element(By.CSS_SELECTOR, ".opblock-summary-method").text,
              b.find_element(By.CSS_SELECTOR, ".opblock-summary-path").text)
             for b in browser.find_elements(By.CSS_SELECTOR, ".opblock")}
    assert ("POST", "/v1/verify") in {(m, p.replace("\u200b", "")) for m, p in shown}
    keep(output_dir / "docs.png").write_bytes(browser.get_screenshot_as_png())
    requests = network_log(browser)
    assert {urlsplit(r["request"]["url"]).path for r in requests} >= {
        "/v1/docs", "/v1/docs/swagger-ui.css", "/v1/docs/swagger-ui-bundle.js", "/v1/openapi.json"}
    assert off_origin(requests, served.origin) == []
    refused = [e["message"] for e in browser.get_log("browser") if "Content Security Policy" in e["message"]]
    assert refused == []
