"""The engine's contract as text: the tables of engine/README.md, generated from the code.

Invariants:
- Pure: strings built from :mod:`engine.fields`, :mod:`engine.results`, the
  check registry and the built-in rulesets. Nothing here reads or writes a
  file; ``tests/engine/update_readme.py`` writes the README, and
  ``tests/engine/test_readme.py`` fails when the README differs from what
  :func:`splice` makes of it, so the tables cannot drift from the code.
- A generated block sits between ``<!-- generated:NAME -->`` and
  ``<!-- /generated:NAME -->``; :func:`splice` replaces exactly those blocks and
  leaves every other line of the README as it is.
"""

from __future__ import annotations

import json
import re
import sys
from collections.abc import Callable, Mapping
from typing import Any

from .checks import CHECKS
from .fields import FIELDS, FieldSpec
from .results import CHECK_IDS, OUTCOME_MEANINGS, Outcome
from .ruleset import MARKERS, builtin_ruleset_ids, load_builtin
from .site import (
    BOARD_FIELDS,
    BOARD_TO_CIRCUIT,
    INSTALLATION_FIELDS,
    INSTALLATION_TO_CIRCUIT,
    ORIGIN_ONLY,
    SAME_EARTHING_ONLY,
)
from .words import word_for

__all__ = ["BLOCKS", "board_field_table", "check_table", "field_table", "inheritance_table",
           "installation_field_table", "marker_table", "outcome_table", "ruleset_table", "splice"]

_SHORT_VALUE = 48  # a table or list longer than this is summarised, GET /v1/rulesets/<id> holds it whole


def _cell(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def field_table(table: Mapping[str, FieldSpec] = FIELDS) -> str:
    """Every record field: name, kind, canonical unit, allowed values, meaning."""
    rows = ["| field | kind | unit | values | meaning |", "|---|---|---|---|---|"]
    for spec in table.values():
        values = ", ".join(f"`{c}`" for c in spec.choices) if spec.choices else ""
        if spec.kind == "flag":
            values = "`true`, `false`"
        rows.append(f"| `{spec.name}` | {spec.kind} | {spec.symbol or ''} | {values} | "
                    f"{_cell(spec.meaning)} |")
    return "\n".join(rows)


def installation_field_table() -> str:
    """The installation record's fields (engine/site.py)."""
    return field_table(INSTALLATION_FIELDS)


def board_field_table() -> str:
    """The board record's fields (engine/site.py)."""
    return field_table(BOARD_FIELDS)


def inheritance_table() -> str:
    """Which circuit field each board and installation field gives, and when."""
    rows = ["| circuit field | from the board's | from the installation's |", "|---|---|---|"]
    from_board = {circuit: board for board, circuit in BOARD_TO_CIRCUIT.items()}
    from_installation = {circuit: inst for inst, circuit in INSTALLATION_TO_CIRCUIT.items()}
    for name in dict.fromkeys((*BOARD_TO_CIRCUIT.values(), *INSTALLATION_TO_CIRCUIT.values())):
        board = f"`{from_board[name]}`" if name in from_board else "—"
        inst = "—"
        if name in from_installation:
            inst = f"`{from_installation[name]}`"
            if from_installation[name] in ORIGIN_ONLY:
                inst += " (boards at the origin only)"
            elif from_installation[name] in SAME_EARTHING_ONLY:
                inst += " (not for a board earthed otherwise)"
        rows.append(f"| `{name}` ({_cell(word_for(name))}) | {board} | {inst} |")
    return "\n".join(rows)


def _summary(module_doc: str | None) -> str:
    first = (module_doc or "").strip().splitlines()[0] if module_doc else ""
    return _cell(first.rstrip("."))


def check_table() -> str:
    """Check ids in the order verdicts list them, each with its module's one-line summary."""
    rows = ["| order | check id | what it judges |", "|---|---|---|"]
    for number, check_id in enumerate(CHECK_IDS, start=1):
        module = sys.modules.get(getattr(CHECKS.get(check_id), "__module__", ""))
        doc = module.__doc__ if module is not None else None
        rows.append(f"| {number} | `{check_id}` | {_summary(doc)} |")
    return "\n".join(rows)


def outcome_table() -> str:
    """Outcomes from the worst down: the circuit's outcome is the worst of its checks."""
    rows = ["| outcome | meaning |", "|---|---|"]
    for outcome in sorted(Outcome, key=lambda o: -o.severity):
        rows.append(f"| `{outcome.value}` | {_cell(OUTCOME_MEANINGS[outcome])} |")
    return "\n".join(rows)


def marker_table() -> str:
    rows = ["| marker | meaning |", "|---|---|"]
    rows += [f"| `{name}` | {_cell(meaning)} |" for name, meaning in MARKERS.items()]
    return "\n".join(rows)


def _value(value: Any) -> str:
    text = json.dumps(value, ensure_ascii=False)
    if len(text) <= _SHORT_VALUE:
        return f"`{_cell(text)}`"
    if isinstance(value, dict):
        return f"table of {len(value)} entries"
    if isinstance(value, list):
        return f"list of {len(value)}"
    return f"`{_cell(text[:_SHORT_VALUE])}…`"


def ruleset_table() -> str:
    """Every figure of every built-in ruleset with its source and marker."""
    parts: list[str] = []
    for rid in builtin_ruleset_ids():
        rules = load_builtin(rid)
        parts.append(f"#### `{rid}`: {_cell(rules.title)}\n")
        parts.append("| entry | value | marker | source |")
        parts.append("|---|---|---|---|")
        for section, entries in rules.sections.items():
            for key, entry in entries.items():
                parts.append(f"| `{section}.{key}` | {_value(entry.value)} | {entry.marker} | "
                             f"{_cell(entry.source)} |")
        parts.append("")
    return "\n".join(parts).rstrip("\n")


BLOCKS: dict[str, Callable[[], str]] = {
    "fields": field_table,
    "installation_fields": installation_field_table,
    "board_fields": board_field_table,
    "inheritance": inheritance_table,
    "checks": check_table,
    "outcomes": outcome_table,
    "markers": marker_table,
    "rulesets": ruleset_table,
}

_BLOCK = re.compile(r"(<!-- generated:(?P<name>[a-z_]+) -->\n)(?P<body>.*?\n)?"
                    r"(<!-- /generated:(?P=name) -->)", re.DOTALL)


def splice(text: str) -> str:
    """``text`` with every generated block replaced by what the code gives now."""

    def fill(match: re.Match[str]) -> str:
        make = BLOCKS.get(match.group("name"))
        if make is None:
            return match.group(0)
        return f"{match.group(1)}{make()}\n{match.group(4)}"

    return _BLOCK.sub(fill, text)
