"""The verdicts page of the demo site in headless Chromium, as an inspector opens and prints it.

The demo job is built as `ohmtally demo` builds it (:func:`api.cli.demo.post_demo`: the
manifest's schedule, meter CSV and logger lines posted to a served app), then
``GET /v1/jobs/<id>/verdicts?format=html`` is opened with JavaScript off.

External references:
- The browser itself (Chromium from Debian's packages) renders the page under the
  server's Content-Security-Policy: what it shows is what a person sees.
- PNG (RFC 2083 / ISO 15948) header and IDAT layout, read with the standard library.
- Chrome DevTools Protocol ``Page.printToPDF`` for print, read back with pypdf; ISO 216
  A4 is 210 × 297 mm = 595.3 × 841.9 pt.
Circuits, boards and readings are the invented demo site's.
"""

from __future__ import annotations

import base64
import json
import re
import struct
import zlib
from collections import Counter
from pathlib import Path
from typing import Any

import pypdf
import pytest
from selenium import webdriver
from selenium.webdriver.common.by import By

from api.cli.demo import post_demo
from api.cli.demo_manifest import load_manifest
from api.render.html import OUTCOMES
from engine import NOTICE
from tests.browser.conftest import Served, keep, network_log, off_origin, visit

pytestmark = pytest.mark.browser
ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def demo_job(served: Served) -> tuple[dict[str, Any], dict[str, Any]]:
    """The demo job posted to the served app, and its verdicts as JSON."""
    job, posts, verdicts = post_demo(served.origin, load_manifest())
    assert all(status in (200, 201) for _name, status, _body in posts), posts
    return job, verdicts


@pytest.fixture(scope="module")
def opened(browser: webdriver.Chrome, served: Served,
           demo_job: tuple[dict[str, Any], dict[str, Any]]) -> dict[str, Any]:
    job, verdicts = demo_job
    visit(browser, served.url(f"/v1/jobs/{job['id']}/verdicts?format=html&limit=200"), javascript=False)
    return verdicts


def png_facts(data: bytes) -> tuple[int, int, int]:
    """(width, height, distinct byte values in the pixel data) of a PNG, by its chunks (RFC 2083)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = struct.unpack(">II", data[16:24])
    pos, idat = 8, b""
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        if kind == b"IDAT":
            idat += data[pos + 8:pos + 8 + length]
        pos += 12 + length
    return width, height, len(set(zlib.decompress(idat)))


def test_every_circuit_shows_its_outcome_in_a_word_and_a_symbol(browser: webdriver.Chrome,
                                                                 opened: dict[str, Any]) -> None:
    """Each circuit of the demo's schedule is an article on screen whose badge reads '<symbol> <outcome>'
    for the outcome in the JSON answer; the page holds no script."""
    want = {(v["board"], v["circuit"]): v["outcome"] for v in opened["verdicts"]}
    seen = {}
    for article in browser.find_elements(By.CSS_SELECTOR, "article.circuit"):
        heading = article.find_element(By.TAG_NAME, "h3")
        board, circuit = heading.find_element(By.CSS_SELECTOR, ":scope > span:not(.badge)").text.split(" / ")
        badge = heading.find_element(By.CSS_SELECTOR, ".badge")
        assert badge.is_displayed()
        symbol, word = badge.text.split(None, 1)  # flex items: innerText puts a line break between them
        assert OUTCOMES[word.lower()][0] == symbol
        seen[(board, circuit)] = word.lower()
    schedule = json.loads((ROOT / "examples" / "demo" / "schedule.json").read_text(encoding="utf-8"))
    assert seen == want and set(want) == {(c["board"], c["circuit"]) for c in schedule["circuits"]}
    assert browser.find_elements(By.TAG_NAME, "script") == []


def test_boards_tree_and_counts_on_screen(browser: webdriver.Chrome, opened: dict[str, Any]) -> None:
    """The tree shows DB1 ⊃ DB2 ⊃ DB3 (the demo's sub-mains) and each board's counts by outcome."""
    nodes = browser.find_elements(By.CSS_SELECTOR, "ul.tree li:has(> div.node)")
    shown: dict[str, tuple[int, dict[str, int]]] = {}
    for node in nodes:
        board = node.find_element(By.CSS_SELECTOR, ":scope > div.node strong").text
        depth = int(browser.execute_script(
            "let d = 0, e = arguments[0]; while ((e = e.parentElement.closest('ul.tree li'))) d++; return d;",
            node))
        counts = {}
        for item in node.find_elements(By.CSS_SELECTOR, ":scope > div.node ul.counts li"):
            _symbol, word, number = item.text.split()
            counts[word.lower()] = int(number)
        shown[board] = (depth, counts)
    want = {b: dict(Counter(v["outcome"] for v in opened["verdicts"] if v["board"] == b))
            for b in ("DB1", "DB2", "DB3")}
    assert shown == {"DB1": (0, want["DB1"]), "DB2": (1, want["DB2"]), "DB3": (2, want["DB3"])}


def test_the_stylesheet_applies_under_the_servers_csp(browser: webdriver.Chrome,
                                                      opened: dict[str, Any]) -> None:
    """The server's CSP allows the inline stylesheet (by its hash): a fail badge is drawn in our fail
    colour, and the browser logged no refusal."""
    badge = browser.find_element(By.CSS_SELECTOR, "article.c-fail .badge.o-fail")
    colour = OUTCOMES["fail"][1]
    rgb = tuple(int(colour[i:i + 2], 16) for i in (1, 3, 5))
    assert badge.value_of_css_property("background-color") == "rgba({}, {}, {}, 1)".format(*rgb)
    refused = [e["message"] for e in browser.get_log("browser") if "Content Security Policy" in e["message"]]
    assert refused == []


def test_screenshot_shows_the_page_and_the_caution_is_visible(
        browser: webdriver.Chrome, opened: dict[str, Any], output_dir: Path) -> None:
    """A full-width screenshot is a non-blank PNG of the window's size; the caution is displayed at the top,
    the list of what to look at first links to the failed circuits; nothing was fetched off the server."""
    caution = browser.find_element(By.CSS_SELECTOR, "header .caution")
    assert caution.is_displayed() and NOTICE in caution.text and caution.location["y"] < 300
    targets = [a.get_attribute("href").split("#")[1] for a in browser.find_elements(By.CSS_SELECTOR, "nav a")]
    failed = [a.get_attribute("id") for a in browser.find_elements(By.CSS_SELECTOR, "article.c-fail")]
    assert targets[:len(failed)] == failed and failed
    height = min(int(browser.execute_script("return document.documentElement.scrollHeight")), 16000)
    browser.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                            {"width": 1280, "height": height, "deviceScaleFactor": 1, "mobile": False})
    try:
        png = browser.get_screenshot_as_png()
    finally:
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
    path = keep(output_dir / "verdicts-demo.png")
    path.write_bytes(png)
    width, tall, distinct = png_facts(png)
    assert (width, tall) == (1280, height) and distinct > 50
    assert off_origin(network_log(browser), re.sub(r"(//[^/]+).*", r"\1", browser.current_url)) == []


def test_print_gives_a4_pages_each_with_the_caution(browser: webdriver.Chrome, opened: dict[str, Any],
                                                     output_dir: Path) -> None:
    """Print emulation (Page.printToPDF, the page's own @page size) gives A4 pages, every one carrying the
    caution, and every circuit of the job is in the document."""
    printed = browser.execute_cdp_cmd("Page.printToPDF", {"preferCSSPageSize": True, "printBackground": True})
    path = keep(output_dir / "verdicts-demo.pdf")
    path.write_bytes(base64.b64decode(printed["data"]))
    reader = pypdf.PdfReader(path)
    assert len(reader.pages) >= 1
    words = " ".join(NOTICE.split())
    everything = ""
    for number, page in enumerate(reader.pages, start=1):
        box = page.mediabox
        assert (round(float(box.width)), round(float(box.height))) == (595, 842), number
        text = " ".join((page.extract_text() or "").split())
        assert "CAUTION" in text and words[:60] in text, f"page {number} has no caution"
        everything += text
    for verdict in opened["verdicts"]:
        assert f"{verdict['board']} / {verdict['circuit']}" in everything
