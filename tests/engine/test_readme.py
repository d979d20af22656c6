"""engine/README.md holds the contract in the project's words: its tables are the code's, never stale."""

from __future__ import annotations

import re

from engine import BOARD_FIELDS, CHECK_IDS, FIELDS, INSTALLATION_FIELDS
from engine.docs import BLOCKS, splice
from tests.engine.update_readme import README


def test_generated_tables_match_the_code() -> None:
    """Fields, check ids, outcomes, markers and every ruleset figure are as the code has them now.

    On failure run ``python -m tests.engine.update_readme`` and commit the README.
    """
    text = README.read_text(encoding="utf-8")
    for name in BLOCKS:
        assert f"<!-- generated:{name} -->" in text and f"<!-- /generated:{name} -->" in text, name
    assert splice(text) == text, "engine/README.md is stale: python -m tests.engine.update_readme"


def test_every_field_and_check_id_is_in_the_readme() -> None:
    """A field or check id added to the code appears in the README (independent of the splice)."""
    text = README.read_text(encoding="utf-8")
    for name in FIELDS:
        assert f"| `{name}` |" in text, name
    listed = re.findall(r"^\| \d+ \| `([a-z_]+)` \|", text, re.MULTILINE)
    assert tuple(listed) == CHECK_IDS


def test_every_board_and_installation_field_is_in_the_readme() -> None:
    """The site records' fields and the inheritance mapping appear in their generated tables."""
    text = README.read_text(encoding="utf-8")
    for block, table in (("installation_fields", INSTALLATION_FIELDS), ("board_fields", BOARD_FIELDS)):
        body = text.split(f"<!-- generated:{block} -->")[1].split(f"<!-- /generated:{block} -->")[0]
        assert [line.split("`")[1] for line in body.strip().splitlines()[2:]] == list(table), block
    inheritance = text.split("<!-- generated:inheritance -->")[1].split("<!-- /generated:inheritance -->")[0]
    assert "| `ze_ohm` (Ze) | `zdb_ohm` |" in inheritance


def test_splice_replaces_only_the_marked_blocks() -> None:
    """Text outside the markers is kept byte for byte; an unknown block name is left alone."""
    text = ("intro\n<!-- generated:checks -->\nold\n<!-- /generated:checks -->\nmiddle\n"
            "<!-- generated:nope -->\nkeep\n<!-- /generated:nope -->\nend\n")
    out = splice(text)
    assert out.startswith("intro\n<!-- generated:checks -->\n| order | check id |")
    assert "\nmiddle\n<!-- generated:nope -->\nkeep\n<!-- /generated:nope -->\nend\n" in out
    assert "\nold\n" not in out
