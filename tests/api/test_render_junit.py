"""JUnit XML output, read back by junitparser and validated against the Ant JUnit schema.

External references:
- junitparser (PyPI, well kept) reads the document as CI servers' plug-ins do.
- The Apache Ant JUnit XML schema (Windy Road, Apache-2.0), as shipped in the
  PyPI package ``ub-test-reports`` (``ub_test_reports/schemas/JUnit.xsd``),
  validated with lxml. That schema predates ``<skipped>``; for documents with
  warnings the test adds exactly ``<skipped>`` and the ``skipped`` count, as
  Jenkins' junit-10.xsd defines them, and nothing else.

Circuits are invented; pass/fail/incomplete come from the polarity check
(BS 7671 Reg. 643.6: a recorded false fails, a missing record is incomplete).
Assertions are on the cases this file controls, so other checks joining the
engine do not break them.
"""

from __future__ import annotations

import copy
from datetime import UTC, datetime
from importlib.resources import files
from typing import Any

import pytest
from junitparser import Error, Failure, JUnitXml, Skipped
from lxml import etree

from api.answers import verify_body
from api.intake.objects import records_from_objects
from api.render import Policy, policy_from_names, render
from engine import CheckResult, Outcome, Verdict, load_ruleset, verify

XS = "{http://www.w3.org/2001/XMLSchema}"
WHEN = datetime(2024, 5, 1, 9, 30, tzinfo=UTC)
CIRCUITS = [
    {"board": "DB1", "circuit": "1", "polarity_ok": True},
    {"board": "DB1", "circuit": "2", "polarity_ok": False},
    {"board": "DB2", "circuit": "1"},  # no polarity record: incomplete
]


def body_of(circuits: list[Any], rejected: list[dict[str, Any]] | None = None) -> dict[str, Any]:
    records, bad = records_from_objects(circuits)
    ruleset = load_ruleset(None)
    return verify_body(ruleset, verify(records, ruleset), [*bad, *(rejected or [])])


def junit(body: dict[str, Any], policy: Policy) -> str:
    text, media_type = render(body, "junit", policy, generated_at=WHEN)
    assert media_type == "application/xml"
    return text


def cases(text: str) -> dict[tuple[str, str], Any]:
    return {(case.classname, case.name): case
            for suite in JUnitXml.fromstring(text.encode()) for case in suite}


def ant_schema(*, with_skipped: bool) -> etree.XMLSchema:
    tree = etree.parse(str(files("ub_test_reports") / "schemas" / "JUnit.xsd"))
    if with_skipped:
        tree = copy.deepcopy(tree)
        choice = tree.find(f".//{XS}element[@name='testcase']/{XS}complexType/{XS}choice")
        skipped = etree.SubElement(choice, f"{XS}element", name="skipped")
        etree.SubElement(etree.SubElement(skipped, f"{XS}complexType"), f"{XS}attribute",
                         name="message", type="xs:string")
        suite_type = tree.find(f"{XS}complexType[@name='testsuite']")
        etree.SubElement(suite_type, f"{XS}attribute", name="skipped", type="xs:int")
    return etree.XMLSchema(tree)


def test_one_case_per_check_per_circuit_named_by_board_circuit_and_check() -> None:
    """Test count equals the body's check count; polarity cases are '<board>.<circuit>' / 'polarity'."""
    body = body_of(CIRCUITS)
    got = cases(junit(body, policy_from_names()))
    assert len(got) == sum(len(v["checks"]) for v in body["verdicts"])
    assert {("DB1.1", "polarity"), ("DB1.2", "polarity"), ("DB2.1", "polarity")} <= set(got)
    suites = [s.name for s in JUnitXml.fromstring(junit(body, policy_from_names()).encode())]
    assert suites == ["DB1", "DB2"]


@pytest.mark.parametrize(("fail_on", "warn_on", "incomplete_is"), [
    ("fail", "incomplete", Skipped),
    ("fail", "none", None),
    ("investigate", "incomplete", Skipped),
    ("incomplete", "none", Failure),
])
def test_policy_decides_failure_skipped_or_plain(fail_on: str, warn_on: str,
                                                 incomplete_is: type | None) -> None:
    """A failed polarity is always <failure>; an incomplete one follows the policy (issue 8)."""
    got = cases(junit(body_of(CIRCUITS), policy_from_names(fail_on, warn_on)))
    assert got[("DB1.1", "polarity")].is_passed
    failed = got[("DB1.2", "polarity")].result
    assert [type(r) for r in failed] == [Failure]
    assert failed[0].type == "fail"
    assert "polarity recorded as incorrect" in failed[0].text
    assert "basis BS 7671" in failed[0].message
    incomplete = got[("DB2.1", "polarity")].result
    assert [type(r) for r in incomplete] == ([] if incomplete_is is None else [incomplete_is])


def test_investigate_follows_fail_on_and_message_carries_value_limit_basis() -> None:
    """An investigate check is skipped by default, a failure under --fail-on investigate, with figures."""
    check = CheckResult(check="loop_impedance", outcome=Outcome.INVESTIGATE, value=1.2, limit=1.37,
                        limit_kind="max", unit="Ω", method="measured", basis="a basis",
                        detail="above 80 % of the maximum")
    verdict = Verdict(board="DB3", circuit="7", outcome=Outcome.INVESTIGATE, checks=(check,))
    body = verify_body(load_ruleset(None), [verdict], [])
    default = cases(junit(body, policy_from_names()))[("DB3.7", "loop_impedance")]
    assert [type(r) for r in default.result] == [Skipped]
    strict = cases(junit(body, policy_from_names("investigate")))[("DB3.7", "loop_impedance")]
    (failure,) = strict.result
    assert isinstance(failure, Failure) and failure.type == "investigate"
    for part in ("value 1.2 Ω", "limit max 1.37 Ω", "basis a basis"):
        assert part in failure.message


def test_rejected_input_is_an_error_case_in_an_input_suite() -> None:
    """Each rejected field becomes an <error> case, so the CI report shows unjudged readings."""
    got = cases(junit(body_of([{"board": "DB1", "circuit": "9", "zs_ohm": "3 kA"}]), Policy()))
    (error,) = got[("input.body", "/circuits/0/zs_ohm")].result
    assert isinstance(error, Error) and error.type


def test_suite_counts_match_the_cases() -> None:
    """tests/failures/errors/skipped attributes agree with the cases junitparser counts."""
    text = junit(body_of(CIRCUITS, [{"line": 4, "code": "bad", "reason": "x"}]), Policy())
    xml = JUnitXml.fromstring(text.encode())
    for suite in xml:
        listed = list(suite)
        assert suite.tests == len(listed)
        assert suite.failures == sum(c.is_failure for c in listed)
        assert suite.errors == sum(c.is_error for c in listed)
        assert (suite.skipped or 0) == sum(c.is_skipped for c in listed)


def test_document_without_warnings_is_valid_against_the_ant_junit_schema() -> None:
    """With --warn-on none the document (failures and input errors included) validates as published."""
    text = junit(body_of(CIRCUITS, [{"line": 4, "code": "bad", "reason": "x"}]),
                 policy_from_names("fail", "none"))
    schema = ant_schema(with_skipped=False)
    assert schema.validate(etree.fromstring(text.encode())), schema.error_log


def test_document_with_warnings_is_valid_against_the_schema_plus_skipped() -> None:
    """With warnings it validates once <skipped> is allowed, and not before (the check can fail)."""
    doc = etree.fromstring(junit(body_of(CIRCUITS), policy_from_names()).encode())
    assert not ant_schema(with_skipped=False).validate(doc)
    schema = ant_schema(with_skipped=True)
    assert schema.validate(doc), schema.error_log


def test_hostile_names_are_escaped_and_characters_illegal_in_xml_replaced() -> None:
    """A board with markup and control characters still yields well-formed, schema-valid XML."""
    board = 'DB<1>&"\x01\x1b'
    text = junit(body_of([{"board": board, "circuit": "1", "polarity_ok": False}]),
                 policy_from_names("fail", "none"))
    schema = ant_schema(with_skipped=False)
    assert schema.validate(etree.fromstring(text.encode())), schema.error_log
    assert ("DB<1>&\"\ufffd\ufffd.1", "polarity") in cases(text)


def test_timestamp_is_the_given_time_in_utc_without_zone() -> None:
    """The Ant schema's timestamp pattern has no zone; we write UTC."""
    text = junit(body_of(CIRCUITS[:1]), Policy())
    assert 'timestamp="2024-05-01T09:30:00"' in text
