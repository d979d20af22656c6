"""The human table: plain text off a terminal, rich on one, user text never obeyed."""

from __future__ import annotations

import io
from typing import Any

from rich.console import Console

from api.answers import verify_body
from api.intake.objects import records_from_objects
from api.render import FORMATS, MEDIA_TYPES, policy_from_names, render, rich_table
from engine import load_ruleset, verify


def body_of(circuits: list[Any]) -> dict[str, Any]:
    records, bad = records_from_objects(circuits)
    ruleset = load_ruleset(None)
    return verify_body(ruleset, verify(records, ruleset), bad)


BODY_CIRCUITS = [{"board": "DB1", "circuit": "1", "polarity_ok": False},
                 {"board": "DB\x1b[2J1", "circuit": "2"}]


def test_formats_and_media_types_cover_the_five_outputs() -> None:
    """FORMATS lists table/json/junit/csv/html and each has a media type for the API."""
    assert set(FORMATS) == {"table", "json", "junit", "csv", "html"} == set(MEDIA_TYPES)


def test_plain_table_has_no_escape_codes_and_escapes_control_characters() -> None:
    """A board name with an ESC sequence is shown as \\x1b, so a CI log or terminal is not rewritten."""
    text, media_type = render(body_of(BODY_CIRCUITS), "table")
    assert media_type.startswith("text/plain")
    assert "\x1b" not in text
    assert "DB\\x1b[2J1" in text


def test_table_marks_what_the_policy_changes() -> None:
    """Under --fail-on incomplete the incomplete circuit reads '→ fail' and counts in the policy line."""
    text, _ = render(body_of(BODY_CIRCUITS), "table", policy_from_names("incomplete"))
    assert "INCOMPLETE → fail" in text
    assert "circuits failing under it: 2" in text


def test_rich_table_does_not_interpret_markup_from_the_file() -> None:
    """A board named '[bold red]X' is printed literally on a terminal, not as rich markup."""
    out = io.StringIO()
    Console(file=out, force_terminal=True, width=200).print(
        rich_table(body_of([{"board": "[bold red]X", "circuit": "1", "polarity_ok": True}]),
                   policy_from_names()))
    assert "[bold red]X" in out.getvalue()
