"""The verdicts page: a verify body as one HTML5 document a person reads on screen or prints on A4.

Invariants:
- Self-contained: the stylesheet is inline and the page has no script, no
  external font, image or link target other than its own ``#`` anchors, so it
  reads the same with JavaScript off, saved to a file, or printed. The bars
  are inline SVG drawn with attributes (no CSS needed), so a strict
  Content-Security-Policy that blocks the stylesheet still leaves a readable page.
- Everything taken from the body (board and circuit names, descriptions,
  details, rejected lines) is escaped by Jinja's autoescape, after
  :func:`_clean` has replaced what HTML may not carry (control characters as
  ``\\xNN``, lone surrogates and noncharacters as U+FFFD), so the page is
  always valid UTF-8 and text is shown, never obeyed.
- Every outcome is said three ways: a word in small capitals, a symbol
  (:data:`OUTCOMES`) and a badge shape (pill, solid square, double border,
  dashed border); colour only repeats it. The colours are ours and keep at
  least 4.5:1 contrast on white (WCAG 2.1 §1.4.3, tested).
- The caution (the body's ``notice``) is at the top and the foot of the page,
  and on every printed page through the A4 page's bottom margin box
  (``@page``), which carries ``engine.NOTICE``.
- The page follows the body: the board tree (:mod:`.html_boards`), the
  circuits in the tree's order, each check (:mod:`.html_checks`); the
  ``installation`` and ``boards`` sections, a verdict's ``description`` and a
  check's ``inputs.previous`` are shown when the body carries them.
- :data:`STYLE_SOURCE` is the stylesheet's CSP ``style-src`` source (its
  SHA-256), so a server can allow exactly this stylesheet and nothing else.
"""

from __future__ import annotations

import base64
import functools
import hashlib
import re
from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from importlib import resources
from typing import TYPE_CHECKING, Any

from engine import NOTICE

from .html_boards import BoardNode, board_tree
from .html_checks import CheckView, check_view
from .policy import DEFAULT_POLICY, Policy, Treatment
from .table import Descriptions, description_of
from .words import case_names, trade_text, word_for

if TYPE_CHECKING:
    import jinja2

__all__ = ["MEDIA_TYPE", "OUTCOMES", "STYLE", "STYLE_SOURCE", "render_html"]

MEDIA_TYPE = "text/html; charset=utf-8"

# outcome → (symbol, colour). Worst first: the order of the page's counts and lists.
OUTCOMES: dict[str, tuple[str, str]] = {
    "fail": ("✗", "#a8321c"),
    "investigate": ("!", "#7d5200"),
    "incomplete": ("?", "#5a4a8a"),
    "pass": ("✓", "#1f5c99"),
}
_ATTENTION = (("fail", "act on these first"), ("investigate", "to investigate"),
              ("incomplete", "readings missing"))


def _css_string(text: str) -> str:
    return '"' + text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\a ") + '"'


def _stylesheet() -> str:
    css = resources.files("api.render").joinpath("templates/verdicts.css").read_text(encoding="utf-8")
    for outcome, (_symbol, colour) in OUTCOMES.items():
        css = css.replace(f"@{outcome}@", colour)
    return css.replace("@notice@", _css_string(NOTICE))


STYLE = _stylesheet()
STYLE_SOURCE = "'sha256-" + base64.b64encode(hashlib.sha256(STYLE.encode("utf-8")).digest()).decode() + "'"

# What HTML text may not hold (WHATWG HTML §13.2.2 "control" and "noncharacter" parse errors), and
# lone surrogates, which UTF-8 cannot encode.
_CONTROL = re.compile("[\u0000-\u0008\u000b\u000e-\u001f\u007f-\u009f]")
_UNENCODABLE = re.compile("[\ud800-\udfff\ufdd0-\ufdef\ufffe\uffff]")


class _Trusted(str):
    """Our own stylesheet, marked so autoescape leaves it whole (it is no user text)."""

    __slots__ = ()

    def __html__(self) -> str:
        return str(self)


def _clean(value: Any) -> Any:
    """Every ``{{ … }}`` of the template passes here before autoescape (Jinja's ``finalize``)."""
    if value is None:
        return ""
    if not isinstance(value, str) or hasattr(value, "__html__"):
        return value  # numbers, and the stylesheet marked safe
    text = _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", value)
    return _UNENCODABLE.sub("\ufffd", text)


@functools.cache
def _template() -> jinja2.Template:
    # measured start-up cost: jinja2 ≈ 35 ms (python -X importtime); the server has it loaded already
    # (Flask), but every `ohmtally verify` that prints another format would pay it for nothing
    import jinja2  # measured start-up cost, see above

    env = jinja2.Environment(loader=jinja2.PackageLoader("api.render", "templates"), autoescape=True,
                             undefined=jinja2.StrictUndefined, finalize=_clean, trim_blocks=True,
                             lstrip_blocks=True)
    return env.get_template("verdicts.html")


def _unit(name: str) -> str:
    for suffix, unit in (("_mohm", "MΩ"), ("_ohm", "Ω"), ("_ka", "kA"), ("_ma", "mA"), ("_ms", "ms"),
                         ("_mm2", "mm²"), ("_v", "V"), ("_a", "A"), ("_s", "s"), ("_c", "°C"), ("_m", "m")):
        if name.endswith(suffix):
            return unit
    return ""


def _fact_lines(facts: Mapping[str, Any], skip: Sequence[str] = ()) -> list[str]:
    """``Ze 0.21 Ω``, ``earthing TN-C-S`` …: a section's plain facts, in the trade's words."""
    lines = []
    for name, value in facts.items():
        if name in skip or value is None or isinstance(value, Mapping | list):
            continue
        shown = ("yes" if value else "no") if isinstance(value, bool) else str(value)
        lines.append(f"{word_for(name)} {shown} {_unit(name)}".strip())
    return lines


@dataclass(slots=True, kw_only=True)
class CircuitView:
    anchor: str
    board: str
    circuit: str
    description: str
    outcome: str
    checks: list[CheckView]
    policy_note: str
    notes: list[str]


@dataclass(slots=True, kw_only=True)
class BoardView:
    board: str
    anchor: str
    description: str
    fed_from: str | None
    feeder_anchor: str | None
    fact_lines: list[str]
    counts: Counter[str]
    circuits: int
    circuit_views: list[CircuitView] = field(default_factory=list)
    children: list[BoardView] = field(default_factory=list)
    facts: Mapping[str, Any] = field(default_factory=dict)


def _notes(verdict: Mapping[str, Any]) -> list[str]:
    notes = []
    for key, said in (("defaults_applied", "ruleset defaults used"), ("inherited", "inherited"),
                      ("inferred", "read from the readings")):
        found = verdict.get(key)
        if isinstance(found, Mapping) and found:
            notes.append(said + ": " + "; ".join(f"{word_for(k)} {v}" for k, v in found.items()))
    for error in verdict.get("errors") or ():
        reason = error.get("message") or error.get("reason") or error.get("code") or ""
        notes.append(f"could not evaluate {error.get('check', 'a check')}: {trade_text(str(reason))}")
    return notes


def _policy_note(outcome: str, policy: Policy) -> str:
    if outcome != "fail" and policy.treat(outcome) is Treatment.FAIL:
        return f"counts as a failure under the policy in force ({policy.describe()})"
    return ""


def _circuit(verdict: Mapping[str, Any], anchor: str, policy: Policy,
             descriptions: Descriptions | None) -> CircuitView:
    checks = list(verdict.get("checks") or ())
    return CircuitView(anchor=anchor, board=str(verdict["board"]), circuit=str(verdict["circuit"]),
                       description=description_of(verdict, descriptions), outcome=str(verdict["outcome"]),
                       checks=[check_view(n, c) for n, c in zip(case_names(checks), checks, strict=True)],
                       policy_note=_policy_note(str(verdict["outcome"]), policy), notes=_notes(verdict))


def _attention(circuits: Sequence[CircuitView]) -> list[dict[str, Any]]:
    groups = []
    for outcome, title in _ATTENTION:
        items = [{"anchor": c.anchor, "board": c.board, "circuit": c.circuit, "description": c.description,
                  "reasons": [_reason(k) for k in c.checks if k.outcome == outcome]}
                 for c in circuits if c.outcome == outcome]
        if items:
            groups.append({"outcome": outcome, "title": title, "entries": items})
    return groups


def _reason(check: CheckView) -> str:
    if check.reading and check.limit:
        return f"{check.name} {check.reading} against {check.limit}"
    return f"{check.name} ({check.detail})" if check.detail else check.name


def _input_rows(items: Sequence[Mapping[str, Any]], kind: str) -> list[dict[str, str]]:
    rows = []
    for item in items:
        where = item.get("pointer") or (f"line {item['line']}" if item.get("line") is not None else "")
        source = f"{item['file']} " if item.get("file") else ""
        name = item.get("column") or (word_for(str(item["field"])) if item.get("field") else "")
        rows.append({"kind": kind, "where": (source + str(where)).strip(), "name": str(name),
                     "reason": trade_text(str(item.get("reason", "")))})
    return rows


def _boards(roots: Sequence[BoardNode], circuits: Mapping[int, CircuitView],
            anchors: Mapping[tuple[str, str], str]) -> list[BoardView]:
    def view(node: BoardNode) -> BoardView:
        feeder = anchors.get((node.feeder_board or "", node.feeder_circuit or ""))
        return BoardView(board=node.board, anchor=node.anchor,
                         description=str(node.facts.get("description") or ""),
                         fed_from=node.fed_from, feeder_anchor=feeder, counts=node.counts,
                         circuits=node.circuits,
                         fact_lines=_fact_lines(node.facts, skip=("board", "board_fed_from", "description")),
                         circuit_views=[circuits[id(v)] for v in node.verdicts],
                         children=[view(child) for child in node.children], facts=node.facts)
    return [view(root) for root in roots]


def _in_order(views: Sequence[BoardView]) -> list[BoardView]:
    out: list[BoardView] = []
    for board in views:
        out += [board, *_in_order(board.children)]
    return out


def render_html(body: Mapping[str, Any], policy: Policy = DEFAULT_POLICY,
                descriptions: Descriptions | None = None) -> str:
    """The verify body as the verdicts page (see the module's invariants)."""
    verdicts = list(body.get("verdicts") or ())
    circuits: dict[int, CircuitView] = {}
    anchors: dict[tuple[str, str], str] = {}
    for index, verdict in enumerate(verdicts, start=1):
        circuits[id(verdict)] = _circuit(verdict, f"c{index}", policy, descriptions)
        anchors.setdefault((str(verdict["board"]), str(verdict["circuit"])), f"c{index}")
    roots = _boards(board_tree(body, verdicts), circuits, anchors)
    ruleset = body.get("ruleset") or {}
    installation = body.get("installation")
    failing = policy.failing_circuits(verdicts)
    page = {
        "title": f"Test verdicts — {ruleset.get('id', '')}", "style": _Trusted(STYLE),
        "ruleset_id": ruleset.get("id", ""), "ruleset_title": ruleset.get("title", ""),
        "notice": body.get("notice") or NOTICE, "total": len(verdicts),
        "counts": Counter(str(v["outcome"]) for v in verdicts),
        "policy_line": "" if policy == DEFAULT_POLICY else
        f"Policy in force: {policy.describe()} — circuits failing under it: {failing}",
        "attention": _attention(list(circuits.values())),
        "installation": _fact_lines(installation) if isinstance(installation, Mapping) else [],
        "roots": roots, "boards": _in_order(roots),
        "rejected": _input_rows(body.get("rejected") or (), "rejected"),
        "warnings": _input_rows(body.get("warnings") or (), "warning"),
    }
    return _template().render(page=page, order=list(OUTCOMES),
                              symbols={k: s for k, (s, _) in OUTCOMES.items()},
                              colours={k: c for k, (_, c) in OUTCOMES.items()})
