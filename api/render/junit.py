"""JUnit XML: one test case per check per circuit, for a CI server's test report.

Invariants:
- One ``<testsuite>`` per board (first-seen order); in it one ``<testcase>``
  per check result, ``classname="<board>.<circuit>"``, named by what it
  tested: the check id, qualified where the check judged several things
  (``insulation L-E``, ``rcd_time at 5 IΔn``, ``ring_continuity r1 vs rn``;
  :func:`.words.case_names`). A circuit with no applicable check is one case
  named ``(circuit)``, so it is never silent.
- Messages and texts are for people: numbers as a meter shows them, the
  margin as a percentage, field names in sentences as the trade's words, the
  circuit's description in its cases' text.
- The policy decides each case: treated as fail → ``<failure>`` (its
  ``type`` is the outcome, its ``message`` has value, relation, limit, unit and
  basis, its text the detail, method and inputs); warn → ``<skipped>`` with the
  same message (GitLab, GitHub reporters, Jenkins and Azure show skipped cases
  as a separate, visible count, while ``<system-out>`` is hidden behind a
  click); pass → a plain case. Every non-pass outcome also gets a line in the
  suite's ``<system-out>``, so nothing a policy let through is lost.
- Rejected input is a last suite, ``input``, of ``<error>`` cases (the
  readings could not be judged), one per rejected line or field; the input's
  warnings (names read as no field) are ``<skipped>`` cases there, so a CI
  report counts them.
- The document follows the Apache Ant JUnit schema (timestamp, hostname,
  properties, system-out and system-err are always present; ``hostname`` is
  ``localhost`` by design: the server's name is no business of the report),
  plus ``<skipped>`` and a ``skipped`` count as Jenkins' junit-10.xsd adds
  them — only when there is a warning.
- Only characters XML 1.0 allows are written (see ``_text``).
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from collections import Counter
from datetime import UTC, datetime
from typing import Any

from ._text import meter_number, meter_pair, percent, xml_safe
from .policy import Policy, Treatment
from .table import Descriptions, description_of
from .words import case_names, trade_text, word_for

__all__ = ["NO_CHECK_NAME", "render_junit"]

NO_CHECK_NAME = "(circuit)"
INPUT_SUITE = "input"


def _message(name: str, check: dict[str, Any]) -> str:
    parts = [f"{name} {check['outcome']}"]
    value, limit = meter_pair(check.get("value"), check.get("limit"))
    unit = f" {check['unit']}" if check.get("unit") else ""
    if check.get("value") is not None:
        rel = "" if check.get("relation") in (None, "=") else check["relation"]
        parts.append(f"value {rel}{value}{unit}")
    if check.get("limit") is not None:
        kind = {"max": "max ", "min": "min "}.get(check.get("limit_kind") or "", "")
        parts.append(f"limit {kind}{limit}{unit}")
    if check.get("margin") is not None:
        parts.append(f"margin {percent(check['margin'])}")
    if check.get("basis"):
        parts.append(f"basis {check['basis']}")
    return "; ".join(parts)


def _shown(value: Any) -> str:
    if isinstance(value, list):
        return ", ".join(word_for(v) if isinstance(v, str) else meter_number(v) for v in value)
    return trade_text(value) if isinstance(value, str) else meter_number(value)


def _text(check: dict[str, Any], description: str) -> str:
    lines = [trade_text(check.get("detail") or "")]
    if description:
        lines.append(f"circuit: {description}")
    if check.get("method"):
        lines.append(f"method: {check['method']}")
    for key, value in (check.get("inputs") or {}).items():
        if isinstance(value, dict):
            continue  # nested working (upstream parts, errors): in the JSON answer
        lines.append(f"{word_for(key)}: {_shown(value)}")
    return "\n".join(lines)


def _cases(verdict: dict[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    checks = verdict["checks"] or [{"check": NO_CHECK_NAME, "outcome": verdict["outcome"],
                                    "detail": "no applicable check could be run"}]
    return list(zip(case_names(checks), checks, strict=True))


class _Suite:
    def __init__(self, root: ET.Element, index: int, name: str, stamp: str,
                 properties: dict[str, str]) -> None:
        self.el = ET.SubElement(root, "testsuite", {
            "name": xml_safe(name) or "-", "package": xml_safe(name) or "-", "id": str(index),
            "timestamp": stamp, "hostname": "localhost", "time": "0"})
        props = ET.SubElement(self.el, "properties")
        for key, value in properties.items():
            ET.SubElement(props, "property", {"name": key, "value": xml_safe(value)})
        self.counts: Counter[str] = Counter()
        self.out: list[str] = []
        self.err: list[str] = []

    def case(self, classname: str, name: str) -> ET.Element:
        self.counts["tests"] += 1
        return ET.SubElement(self.el, "testcase", {
            "classname": xml_safe(classname), "name": xml_safe(name), "time": "0"})

    def close(self) -> None:
        ET.SubElement(self.el, "system-out").text = xml_safe("\n".join(self.out))
        ET.SubElement(self.el, "system-err").text = xml_safe("\n".join(self.err))
        for key in ("tests", "failures", "errors"):
            self.el.set(key, str(self.counts[key]))
        if self.counts["skipped"]:
            self.el.set("skipped", str(self.counts["skipped"]))


def render_junit(body: dict[str, Any], policy: Policy, *, generated_at: datetime | None = None,
                 descriptions: Descriptions | None = None) -> str:
    when = (generated_at or datetime.now(UTC)).astimezone(UTC)
    stamp = when.strftime("%Y-%m-%dT%H:%M:%S")  # the Ant schema forbids a zone: it is UTC
    properties = {"ruleset": str(body["ruleset"].get("id", "")),
                  **{f"policy.{k}": v for k, v in policy.as_dict().items()}}
    root = ET.Element("testsuites")
    suites: dict[str, _Suite] = {}
    for verdict in body["verdicts"]:
        board = verdict["board"]
        if board not in suites:
            suites[board] = _Suite(root, len(suites), board, stamp, properties)
        suite = suites[board]
        classname = f"{board}.{verdict['circuit']}"
        description = description_of(verdict, descriptions)
        for name, check in _cases(verdict):
            case = suite.case(classname, name)
            treatment = policy.treat(check["outcome"])
            message = xml_safe(_message(name, check))
            if treatment is Treatment.FAIL:
                suite.counts["failures"] += 1
                ET.SubElement(case, "failure", {"type": check["outcome"], "message": message}
                              ).text = xml_safe(_text(check, description))
            elif treatment is Treatment.WARN:
                suite.counts["skipped"] += 1
                ET.SubElement(case, "skipped", {"message": f"warning: {message}"})
            if check["outcome"] != "pass":
                suite.out.append(f"{classname} {name}: {treatment.value} ({message}): "
                                 f"{trade_text(check.get('detail') or '')}")
        for error in verdict.get("errors") or ():
            suite.err.append(f"{classname} {error.get('check', '')}: {error.get('message', '')}")
    _input_suite(root, body, len(suites), stamp, properties)
    for suite in suites.values():
        suite.out.append("CAUTION: " + body["notice"])
        suite.close()
    ET.indent(root)
    return ET.tostring(root, encoding="unicode", xml_declaration=True) + "\n"


def _input_suite(root: ET.Element, body: dict[str, Any], index: int, stamp: str,
                 properties: dict[str, str]) -> None:
    warnings = body.get("warnings") or []
    if not body["rejected"] and not warnings:
        return
    suite = _Suite(root, index, INPUT_SUITE, stamp, properties)
    for bad in body["rejected"]:
        where = bad.get("pointer") or (f"line {bad['line']}" if "line" in bad else "-")
        source = bad.get("file") or "body"
        case = suite.case(f"{INPUT_SUITE}.{source}", str(where))
        suite.counts["errors"] += 1
        ET.SubElement(case, "error", {"type": str(bad.get("code", "rejected")),
                                      "message": xml_safe(trade_text(str(bad.get("reason", ""))))}
                      ).text = xml_safe(str(bad.get("text", "")))
    for note in warnings:
        where = note.get("pointer") or (f"line {note['line']}" if "line" in note else "-")
        named = f" {note['column']}" if note.get("column") else ""
        case = suite.case(f"{INPUT_SUITE}.{note.get('file') or 'body'}", f"{where}{named}")
        suite.counts["skipped"] += 1
        ET.SubElement(case, "skipped", {"message": xml_safe(f"warning: {note.get('code', '')}: "
                                                            f"{note.get('reason', '')}")})
    suite.close()
