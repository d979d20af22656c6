"""The human table: plain text for logs and pipes, rich colour on a terminal.

Invariants:
- Both forms show the same rows: one per circuit (its outcome in capitals and,
  where the policy changes how it counts, ``→ fail`` / ``→ warn``), then one per
  check; then the summary, the policy's verdict, rejected input and the notice.
- Plain text has no escape codes, so it is safe for a CI log or a file; the
  caller picks rich only when stdout is a terminal.
- Text from the readings file is shown, never obeyed: control characters are
  escaped, and rich gets ``Text`` objects, never markup strings.
"""

from __future__ import annotations

from typing import Any

from ._text import fmt_value, printable
from .policy import Policy, Treatment

__all__ = ["HEADER", "render_table", "rich_table"]

HEADER: tuple[str, ...] = ("board", "circuit", "check", "outcome", "value", "limit", "unit", "detail")

_STYLE = {"pass": "green", "fail": "bold red", "investigate": "yellow", "incomplete": "cyan"}


def _outcome_cell(outcome: str, policy: Policy, *, upper: bool) -> str:
    shown = outcome.upper() if upper else outcome
    treated = policy.treat(outcome)
    natural = Treatment.FAIL if outcome == "fail" else Treatment.PASS
    if treated is not natural:
        shown += f" → {treated.value}"
    return shown


def _rows(body: dict[str, Any], policy: Policy) -> list[tuple[str, ...]]:
    rows: list[tuple[str, ...]] = []
    for verdict in body["verdicts"]:
        rows.append((printable(verdict["board"]), printable(verdict["circuit"]), "(circuit)",
                     _outcome_cell(verdict["outcome"], policy, upper=True), "", "", "", ""))
        for check in verdict["checks"]:
            rel = "" if check["relation"] == "=" else check["relation"]
            value = "" if check["value"] is None else rel + fmt_value(check["value"])
            rows.append(("", "", check["check"], _outcome_cell(check["outcome"], policy, upper=False),
                         value, fmt_value(check["limit"]), check["unit"] or "",
                         printable(check["detail"] or "")))
    return rows


def _footer(body: dict[str, Any], policy: Policy) -> list[str]:
    lines = ["", ", ".join(f"{k}: {v}" for k, v in body["summary"].items())]
    failing = policy.failing_circuits(body["verdicts"])
    lines.append(f"policy: {policy.describe()} — circuits failing under it: {failing}")
    for bad in body["rejected"]:
        where = bad.get("pointer") or f"line {bad.get('line')}"
        source = bad.get("file", "")
        lines.append(printable(f"rejected {source} {where}: {bad.get('reason', '')}".replace("  ", " ")))
    lines += ["", "CAUTION: " + body["notice"]]
    return lines


def render_table(body: dict[str, Any], policy: Policy) -> str:
    ruleset = body["ruleset"]
    lines = [f"ruleset: {ruleset.get('id')} — {ruleset.get('title', '')}"]
    rows = _rows(body, policy)
    widths = [max([len(h), *(len(r[i]) for r in rows)]) for i, h in enumerate(HEADER[:-1])]
    for row in [HEADER, *rows]:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row[:-1], widths, strict=True))
                     + "  " + row[-1])
    lines += _footer(body, policy)
    return "\n".join(line.rstrip() for line in lines) + "\n"


def rich_table(body: dict[str, Any], policy: Policy) -> Any:
    """A rich renderable of the same content (imported late: only a terminal needs rich)."""
    from rich.console import Group
    from rich.table import Table
    from rich.text import Text

    ruleset = body["ruleset"]
    table = Table(title=Text(f"{ruleset.get('id')} — {ruleset.get('title', '')}"),
                  show_lines=False, header_style="bold")
    wraps = ("board", "circuit", "detail")  # user text may fold; ids, outcomes and figures stay whole
    for name in HEADER:
        table.add_column(name, overflow="fold", no_wrap=name not in wraps,
                         ratio=1 if name == "detail" else None)
    for row in _rows(body, policy):
        outcome = row[3].split(" ")[0].lower()
        cells = [Text(cell) for cell in row]
        cells[3].stylize(_STYLE.get(outcome, ""))
        if row[2] == "(circuit)":
            for cell in cells[:3]:
                cell.stylize("bold")
        table.add_row(*cells)
    return Group(table, *(Text(line) for line in _footer(body, policy)))
