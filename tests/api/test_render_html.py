"""The verdicts page (``format=html``): valid HTML5, self-contained, escaped, every circuit said in words
and symbols, the caution on it, the boards as the records' ``board_fed_from`` link them.

External references:
- The WHATWG HTML parsing algorithm as html5lib implements it (``strict=True``: any parse
  error raises), and the standard library's ``html.parser`` for nesting, content models,
  unique ids and in-page links (HTML Living Standard §3.2.5.1 id uniqueness, §4.4/§4.9 content models).
- CSP Level 3 §2.3.1 hash-source: ``'sha256-'`` + base64 of SHA-256 over the element's text,
  computed here with hashlib on the text between ``<style>`` and ``</style>``.
- WCAG 2.1 SC 1.4.3 (contrast minimum 4.5:1) with the definitions of relative luminance
  and contrast ratio, computed here from the sRGB values.
- The demo site document's boards (``examples/demo-site.json``) for which board feeds which.
Readings and circuits are invented; outcomes come from the engine (BS 7671 Reg. 643.6 for polarity).
"""

from __future__ import annotations

import hashlib
import json
import re
from base64 import b64encode
from collections import Counter
from collections.abc import Callable
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import html5lib
import pytest
from flask.testing import FlaskClient

from api.answers import verify_body
from api.intake.objects import records_from_objects
from api.intake.site_document import read_site_document
from api.render import FORMATS, HTML_STYLE_SOURCE, MEDIA_TYPES, policy_from_names, render
from api.render.html import OUTCOMES, STYLE
from api.render.html_checks import NOTCH, SCALE_END, bar_for, check_view
from engine import NOTICE, load_ruleset, verify

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "examples" / "demo-site.json"
Runner = Callable[..., tuple[int, str, str]]

VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}
PARENTS = {"li": {"ul", "ol"}, "tr": {"thead", "tbody", "tfoot"}, "td": {"tr"}, "th": {"tr"},
           "thead": {"table"}, "tbody": {"table"}}
BLOCKS = {"div", "p", "ul", "ol", "table", "section", "article", "nav", "header", "footer", "h1", "h2", "h3"}


class Page(HTMLParser):
    """The page's structure as the standard library parses it, and every rule it breaks."""

    def __init__(self, text: str) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.ids: Counter[str] = Counter()
        self.refs: list[str] = []
        self.tags: Counter[str] = Counter()
        self.attrs: list[tuple[str, str, str]] = []
        self.style = ""
        self.texts: list[str] = []
        self.feed(text)
        self.close()
        if self.stack:
            self.errors.append(f"unclosed at the end: {self.stack}")

    def _open(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags[tag] += 1
        parent = self.stack[-1] if self.stack else None
        if tag in PARENTS and parent not in PARENTS[tag]:
            self.errors.append(f"<{tag}> inside <{parent}>")
        if tag in BLOCKS and "p" in self.stack:
            self.errors.append(f"<{tag}> inside <p>")
        if tag == "a" and "a" in self.stack:
            self.errors.append("<a> inside <a>")
        for name, value in attrs:
            self.attrs.append((tag, name, value or ""))
            if name == "id":
                self.ids[value or ""] += 1
            if name == "href" and (value or "").startswith("#"):
                self.refs.append((value or "")[1:])
            if name == "aria-labelledby":
                self.refs.append(value or "")

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self._open(tag, attrs)
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag not in VOID and "svg" not in self.stack:
            self.errors.append(f"<{tag}/> self-closed outside SVG")
        self._open(tag, attrs)

    def handle_endtag(self, tag: str) -> None:
        if tag in VOID or not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> where <{self.stack[-1] if self.stack else None}> is open")
            return
        self.stack.pop()

    def handle_data(self, data: str) -> None:
        if self.stack and self.stack[-1] == "style":
            self.style += data
        else:
            self.texts.append(data)

    @property
    def text(self) -> str:
        return " ".join(" ".join(self.texts).split())


class Tree(HTMLParser):
    """The board tree's nodes: board → (parent board, counts shown by outcome)."""

    def __init__(self, text: str) -> None:
        super().__init__(convert_charrefs=True)
        self.nodes: dict[str, tuple[str | None, dict[str, int]]] = {}
        self._stack: list[list[Any]] = []  # [board, parent, counts]
        self._inside = 0
        self._lists: list[str] = []
        self._want: str | None = None
        self._outcome: str | None = None
        self.feed(text[text.index('<ul class="tree">'):])

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        cls = dict(attrs).get("class") or ""
        if tag == "ul" and (cls == "tree" or self._inside):
            self._inside += 1
            self._lists.append(cls)
        if not self._inside:
            return
        if tag == "li" and self._lists[-1] != "counts":
            parent = self._stack[-1][0] if self._stack else None
            self._stack.append([None, parent, {}])
        elif tag == "strong" and self._stack and self._stack[-1][0] is None:
            self._want = "board"
        elif tag == "span" and cls.startswith("badge o-"):
            self._outcome = cls.split()[1][2:]
        elif tag == "span" and cls == "num":
            self._want = "count"

    def handle_endtag(self, tag: str) -> None:
        if not self._inside:
            return
        if tag == "ul":
            self._inside -= 1
            self._lists.pop()
        elif tag == "li" and self._lists[-1] != "counts":
            board, parent, counts = self._stack.pop()
            self.nodes[board] = (parent, counts)

    def handle_data(self, data: str) -> None:
        if self._want == "board":
            self._stack[-1][0] = data
        elif self._want == "count" and self._outcome:
            self._stack[-1][2][self._outcome] = int(data)
        self._want = None


def body_of(circuits: list[dict[str, Any]], **extra: Any) -> dict[str, Any]:
    records, bad = records_from_objects(circuits)
    ruleset = load_ruleset(None)
    return {**verify_body(ruleset, verify(records, ruleset), bad), **extra}


def demo_body() -> dict[str, Any]:
    """The demo site document's answer: its circuits verified with its installation and boards."""
    found = read_site_document(json.loads(DEMO.read_text(encoding="utf-8")))
    assert found.rejected == []
    ruleset = load_ruleset(None)
    return verify_body(ruleset, verify(found.records, ruleset, site=found.site), [], site=found.site)


def html_of(body: dict[str, Any], **kwargs: Any) -> str:
    text, media_type = render(body, "html", **kwargs)
    assert media_type == "text/html; charset=utf-8"
    return text


def assert_valid(text: str) -> Page:
    """Fails on any HTML5 parse error (html5lib strict), bad nesting, duplicate id or dangling link."""
    html5lib.HTMLParser(strict=True, namespaceHTMLElements=False).parse(text)
    page = Page(text)
    assert page.errors == []
    assert [i for i, n in page.ids.items() if n > 1] == []
    for ref in page.refs:
        for target in ref.split():
            assert target in page.ids, f"link to #{target}, which is not on the page"
    assert text.startswith("<!DOCTYPE html>\n<html lang=\"en\">")
    return page


def articles(text: str) -> dict[tuple[str, str], str]:
    """(board, circuit) → the text of its <article>, as a reader sees it."""
    found = {}
    for match in re.finditer(r'<article class="circuit c-(\w+)" id="(c\d+)".*?</article>', text, re.S):
        block = Page(match.group(0)).text
        head = re.search(r"<h3[^>]*>.*?<span>([^<]*) / ([^<]*)</span>", match.group(0), re.S)
        assert head is not None
        found[(_unescape(head.group(1)), _unescape(head.group(2)))] = f"{match.group(1)} | {block}"
    return found


def _unescape(text: str) -> str:
    return Page(f"<p>{text}</p>").text


def test_html_is_a_format_with_its_media_type() -> None:
    """FORMATS offers the five outputs, html among them, to the CLI and the API; html is UTF-8 text/html."""
    assert set(FORMATS) == {"table", "json", "junit", "csv", "html"} == set(MEDIA_TYPES)
    assert MEDIA_TYPES["html"] == "text/html; charset=utf-8"


def test_the_openapi_document_offers_the_page(client: FlaskClient) -> None:
    """POST /v1/verify and GET /v1/jobs/{job_id}/verdicts document text/html beside JSON, XML, CSV, text
    and the compact view's JSON, and ?format= on /verify lists html among its five choices."""
    spec = client.get("/v1/openapi.json").get_json()
    verify_op = spec["paths"]["/v1/verify"]["post"]
    assert set(verify_op["responses"]["200"]["content"]) == {
        "application/json", "application/xml", "text/csv", "text/plain", "text/html",
        "application/vnd.ohmtally.compact+json"}
    param = next(p for p in verify_op["parameters"] if p["name"] == "format")
    assert set(param["schema"]["enum"]) == {"json", "junit", "csv", "table", "html"}
    verdicts_op = spec["paths"]["/v1/jobs/{job_id}/verdicts"]["get"]
    assert "text/html" in verdicts_op["responses"]["200"]["content"]


def test_demo_page_is_valid_html5_without_external_resources() -> None:
    """The demo site's page parses with no HTML5 error, and loads nothing: no script, link, img, src or
    external href; the stylesheet has no url() or @import."""
    page = assert_valid(html_of(demo_body()))
    assert {"script", "link", "img", "iframe", "object", "embed"} & set(page.tags) == set()
    assert [a for a in page.attrs if a[1] == "src" or a[1].startswith("on")] == []
    assert [a for a in page.attrs if a[1] in ("href", "xlink:href") and not a[2].startswith("#")] == []
    assert "url(" not in page.style and "@import" not in page.style


def test_every_circuit_is_on_the_page_with_its_outcome_word_and_symbol() -> None:
    """Each verdict of the demo has its article, whose badge says the outcome in a word and a symbol."""
    body = demo_body()
    shown = articles(html_of(body))
    assert set(shown) == {(v["board"], v["circuit"]) for v in body["verdicts"]}
    for verdict in body["verdicts"]:
        outcome, text = shown[(verdict["board"], verdict["circuit"])].split(" | ", 1)
        symbol = OUTCOMES[verdict["outcome"]][0]
        assert outcome == verdict["outcome"]
        assert text.startswith(f"{symbol} {verdict['outcome']} {verdict['board']} / {verdict['circuit']}")


def test_outcomes_have_distinct_symbols_shapes_and_enough_contrast() -> None:
    """Never colour alone: four symbols, four badge shapes; each colour ≥ 4.5:1 on white, and white on the
    solid fail badge ≥ 4.5:1 (WCAG 2.1 SC 1.4.3 contrast ratio)."""
    assert len({symbol for symbol, _ in OUTCOMES.values()}) == len(OUTCOMES) == 4
    shapes = {o: re.search(r"\.o-" + o + r" \{([^}]*)\}", STYLE) for o in OUTCOMES}
    borders = {o: re.sub(r"(color|background|print-color-adjust|-webkit-print-color-adjust): [^;]+;", "",
                         m.group(1)).strip() for o, m in shapes.items() if m}
    assert len(set(borders.values())) == 4, borders

    def luminance(hex_colour: str) -> float:
        channels = [int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
        linear = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
        return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]

    for _symbol, colour in OUTCOMES.values():
        assert (1.0 + 0.05) / (luminance(colour) + 0.05) >= 4.5, colour


def test_the_caution_is_at_the_top_the_foot_and_on_every_printed_page() -> None:
    """engine.NOTICE is the first and last text block, and the A4 page's bottom margin box carries it."""
    text = html_of(demo_body())
    page = Page(text)
    assert page.text.count(f"CAUTION {NOTICE}") == 2
    assert page.text.index(NOTICE) < page.text.index("Look at these first")
    assert page.text.rstrip().endswith(NOTICE)
    assert re.search(r"@page \{\s*size: A4;", page.style)
    assert f'@bottom-left {{ content: "CAUTION: " "{NOTICE}"' in page.style


def test_stylesheet_hash_is_the_csp_source_the_server_allows() -> None:
    """HTML_STYLE_SOURCE is 'sha256-<base64>' of the page's <style> text (CSP Level 3 hash-source)."""
    page = Page(html_of(demo_body()))
    digest = b64encode(hashlib.sha256(page.style.encode("utf-8")).digest()).decode()
    assert f"'sha256-{digest}'" == HTML_STYLE_SOURCE


HOSTILE = "<script>alert(1)</script>"


def test_text_from_the_file_is_escaped_never_obeyed() -> None:
    """A description, board, circuit and detail holding markup show as text: no <script> or stray tag,
    the page still valid, and the text readable as written."""
    body = body_of([{"board": "DB<b>1", "circuit": '"><img src=x onerror=alert(1)>', "polarity_ok": False},
                    {"board": "DB2", "circuit": "</style></article>", "polarity_ok": True}])
    body["verdicts"][0]["description"] = HOSTILE
    body["verdicts"][1]["checks"][0]["detail"] = "</td></tr></table>" + HOSTILE
    text = html_of(body, descriptions={("DB2", "</style></article>"): "a & b <i>c</i>"})
    page = assert_valid(text)
    assert "script" not in page.tags and "img" not in page.tags and "b" not in page.tags
    # the description in the article and the list to look at; the detail in its row and (DB2 is
    # incomplete) in that list too
    assert page.text.count(HOSTILE) == 4
    assert "a & b <i>c</i>" in page.text and 'DB<b>1' in page.text
    assert "&lt;script&gt;" in text


def test_control_characters_and_lone_surrogates_still_make_valid_utf8() -> None:
    """An ESC, a NUL and a lone surrogate from a readings file become \\x1b, \\x00 and U+FFFD, so the page
    encodes as UTF-8 and parses without error."""
    body = body_of([{"board": "DB\x1b[2J1", "circuit": "1", "polarity_ok": True}])
    body["verdicts"][0]["description"] = "bad \x00 byte \ud800 here"
    text = html_of(body)
    text.encode("utf-8")
    page = assert_valid(text)
    assert "DB\\x1b[2J1" in page.text and "bad \\x00 byte \ufffd here" in page.text


def test_boards_are_a_tree_as_the_schedule_feeds_them() -> None:
    """DB2 sits under DB1 and DB3 under DB2, as the boards' board_fed_from says in the demo's site
    document; each board's counts are its own circuits by outcome."""
    site = json.loads(DEMO.read_text(encoding="utf-8"))
    fed = {b["board"]: b["board_fed_from"].split("/")[0] for b in site["boards"] if b.get("board_fed_from")}
    body = demo_body()
    tree = Tree(html_of(body)).nodes
    boards = {v["board"] for v in body["verdicts"]}
    assert set(tree) == boards == {"DB1", "DB2", "DB3"}
    assert {board: parent for board, (parent, _counts) in tree.items()} == {b: fed.get(b) for b in boards}
    for board in boards:
        want = Counter(v["outcome"] for v in body["verdicts"] if v["board"] == board)
        assert tree[board][1] == dict(want), board


def test_the_boards_section_and_installation_are_used_when_the_body_has_them() -> None:
    """A body with installation and boards sections shows their facts in the trade's words; a board named
    only there is in the tree; a loop of feeders leaves both boards on the page as roots."""
    body = body_of([{"board": "A", "circuit": "1", "polarity_ok": True},
                    {"board": "B", "circuit": "1", "polarity_ok": True}],
                   installation={"earthing": "TN-C-S", "ze_ohm": 0.21, "pfc_ka": 1.9},
                   boards=[{"board": "A", "board_fed_from": "B/1", "location": "plant room"},
                           {"board": "B", "board_fed_from": "A/1", "zdb_ohm": 0.41},
                           {"board": "C", "board_fed_from": "A/1", "description": "spare board"}])
    text = html_of(body)
    page = assert_valid(text)
    assert "Installation earthing TN-C-S Ze 0.21 Ω PFC 1.9 kA" in page.text
    assert "location plant room" in page.text and "Zdb 0.41 Ω" in page.text and "spare board" in page.text
    parents = {board: parent for board, (parent, _counts) in Tree(text).nodes.items()}
    assert parents == {"A": None, "B": None, "C": "A"}  # A and B feed each other: both stand as roots


def test_look_at_these_first_lists_fails_then_investigations_then_missing_with_links() -> None:
    """The list at the top names every non-passing circuit, worst group first, each linked to its article."""
    body = demo_body()
    text = html_of(body)
    nav = text[text.index('<nav class="attention"'):text.index("</nav>")]
    anchors = {(v["board"], v["circuit"]): f"c{i}" for i, v in enumerate(body["verdicts"], start=1)}
    listed = re.findall(r'<a href="#(c\d+)">', nav)
    want = [anchors[(v["board"], v["circuit"])] for outcome in ("fail", "investigate", "incomplete")
            for v in body["verdicts"] if v["outcome"] == outcome]
    assert listed == want and want


def test_bounded_readings_show_as_bounds_and_previous_values_beside_the_reading() -> None:
    """'> 999 MΩ' reads with its relation and an 'at most' bar; a check's inputs.previous shows beside it."""
    body = body_of([{"board": "DB1", "circuit": "1", "ir_test_v": 500, "ir_le_mohm": ">999",
                     "ir_ll_mohm": "2.5", "polarity_ok": True}])
    insulation = [c for c in body["verdicts"][0]["checks"] if c["check"] == "insulation"]
    assert {c["relation"] for c in insulation} == {">", "="}
    insulation[1]["inputs"]["previous"] = {"value": 3.1, "relation": "=", "date": "2021-05-04"}
    page = Page(html_of(body))
    assert ">999 MΩ" in page.text and "reading takes up at most" in page.text
    assert "previous 3.1 MΩ (2021-05-04)" in page.text


def test_policy_marks_what_it_widens() -> None:
    """Under --fail-on incomplete an incomplete circuit says it counts as a failure; the policy line
    counts it."""
    body = body_of([{"board": "DB1", "circuit": "1"}])
    assert body["verdicts"][0]["outcome"] == "incomplete"
    page = Page(html_of(body, policy=policy_from_names("incomplete")))
    assert "counts as a failure under the policy in force" in page.text
    assert "circuits failing under it: 1" in page.text


def test_rejected_input_and_warnings_are_listed() -> None:
    """A rejected field is in the page's input table with its pointer and reason."""
    body = body_of([{"board": "DB1", "circuit": "1", "zs_ohm": "12 kA"}, {"board": "DB1", "circuit": "2"}])
    assert body["rejected"]
    page = assert_valid(html_of(body))
    assert "Input not taken" in page.text and body["rejected"][0]["pointer"] in page.text


def test_a_big_job_renders_as_one_valid_page() -> None:
    """600 circuits on 30 boards (a large site) make one valid page with every circuit on it."""
    circuits = [{"board": f"DB{b}", "circuit": str(c), "polarity_ok": c % 7 != 0, "zs_ohm": 0.4 + c / 100,
                 "device": "B32", "ir_test_v": 500, "ir_le_mohm": ">299"}
                for b in range(30) for c in range(20)]
    body = body_of(circuits)
    text = html_of(body)
    assert len(articles(text)) == 600
    assert_valid(text)


def test_verify_api_serves_the_page_with_a_csp_that_allows_only_its_stylesheet(client: FlaskClient) -> None:
    """POST /v1/verify?format=html answers the page (every circuit, the caution); the CSP allows the
    stylesheet by its hash, no script, and keeps the sandbox."""
    circuits = json.loads(DEMO.read_text(encoding="utf-8"))["circuits"]
    response = client.post("/v1/verify?format=html", json={"circuits": circuits})
    assert response.status_code == 200 and response.mimetype == "text/html"
    text = response.get_data(as_text=True)
    assert len(articles(text)) == len(circuits) and NOTICE in text
    csp = response.headers["Content-Security-Policy"]
    assert f"style-src {HTML_STYLE_SOURCE}" in csp and "default-src 'none'" in csp and "sandbox" in csp
    assert "script-src" not in csp


def test_job_verdicts_page_and_the_cli_give_the_same_page(client: FlaskClient, runner: Runner,
                                                          tmp_path: Path) -> None:
    """GET /v1/jobs/<id>/verdicts?format=html and `ohmtally verify --format html` show the same circuits and
    outcomes as the JSON answer."""
    circuits = json.loads(DEMO.read_text(encoding="utf-8"))["circuits"]
    job = client.post("/v1/jobs", json={"reference": "html-1", "site": "invented"}).get_json()
    posted = client.post(f"/v1/jobs/{job['id']}/readings", json={"circuits": circuits})
    assert posted.status_code in (200, 201)
    limit = f"limit={len(circuits)}"
    page = client.get(f"/v1/jobs/{job['id']}/verdicts?format=html&{limit}")
    assert page.status_code == 200 and page.mimetype == "text/html"
    as_json = client.get(f"/v1/jobs/{job['id']}/verdicts?{limit}").get_json()
    want = {(v["board"], v["circuit"]): v["outcome"] for v in as_json["verdicts"]}
    served = {k: t.split(" | ")[0] for k, t in articles(page.get_data(as_text=True)).items()}
    assert served == want
    path = tmp_path / "site.json"
    path.write_text(json.dumps({"circuits": circuits}), encoding="utf-8")
    status, out, _err = runner("verify", str(path), "--format", "html")
    assert status == 1  # the demo has failing circuits
    assert {k: t.split(" | ")[0] for k, t in articles(out).items()} == want


BARS = [  # (value, relation, limit, kind, margin) → (share, bound, off scale, margin shown)
    ((0.71, "=", 0.956, "max", 0.2573), (0.71 / 0.956, None, False, "26 %")),
    ((1.4, "=", 1.0, "min", 0.4), (1 / 1.4, None, False, "40 %")),
    ((999.0, ">", 1.0, "min", 998.0), (1 / 999, "at most", False, "> 1000 %")),
    ((0.01, "<", 1.37, "max", 0.9927), (0.01 / 1.37, "at most", False, "≥ 99 %")),
    ((2000.0, ">", 1.37, "max", -1458.9), (2000 / 1.37, "at least", True, "< -1000 %")),
    ((0.9, ">", 1.37, "max", 0.343), (0.9 / 1.37, "at least", False, "≤ 34 %")),
    ((0.5, "<", 1.0, "min", -0.5), (2.0, "at least", True, "≤ -50 %")),
]


@pytest.mark.parametrize(("given", "want"), BARS)
def test_bar_is_the_share_of_the_limit_and_a_bound_stays_a_bound(given: tuple[Any, ...],
                                                                  want: tuple[Any, ...]) -> None:
    """Upper limits: value/limit; lower limits (insulation): limit/value; the notch is the limit; a
    bounded reading's share and margin are bounds in the direction its relation says (derived from
    share = value/limit and margin = (limit − value)/limit)."""
    value, relation, limit, kind, margin = given
    check = {"check": "x", "outcome": "pass", "value": value, "relation": relation, "limit": limit,
             "limit_kind": kind, "unit": "Ω", "margin": margin, "detail": "", "basis": None, "inputs": {}}
    bar = bar_for(check)
    assert bar is not None
    share, bound, off_scale, margin_text = want
    assert bar.share == pytest.approx(share) and bar.bound == bound and bar.off_scale is off_scale
    assert bar.notch == pytest.approx(bar.width * NOTCH)
    assert bar.fill == pytest.approx(bar.width * NOTCH * min(share, SCALE_END), abs=0.01)
    assert check_view("x", check).margin == margin_text


@pytest.mark.parametrize("change", [{"limit": 0}, {"limit": None}, {"value": None}, {"limit": -1.0}])
def test_no_bar_without_a_reading_and_a_positive_limit(change: dict[str, Any]) -> None:
    """A check without both figures (or with a limit that is no limit) gets no bar: nothing is invented."""
    check = {"value": 1.0, "relation": "=", "limit": 2.0, "limit_kind": "max", **change}
    assert bar_for(check) is None
