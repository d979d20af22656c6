"""The human table: plain text for logs and pipes, rich colour on a terminal.

Invariants:
- Both forms show the same rows: one per circuit (its outcome in capitals and,
  where the policy changes how it counts, ``→ fail`` / ``→ warn``), then one per
  check; then the summary, the policy's verdict, rejected input and the notice.
- Plain text has no escape codes, so it is safe for a CI log or a file; the
  caller picks rich only when stdout is a terminal.
- Text from the readings file is shown, never obeyed: control characters are
  escaped, and rich gets ``Text`` objects, never markup strings.
- Written for the person on site: numbers as a meter shows them
  (:func:`._text.meter_pair`), each check named by what it tested
  (``insulation L-E``), field names in sentences replaced by the trade's words
  (``Ze``, ``R1+R2``), the circuit's description on its own row, and the
  input's warnings (names read as no field) beside the rejected lines.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ._text import meter_pair, printable
from .policy import Policy, Treatment
from .words import case_names, trade_text, word_for

__all__ = ["HEADER", "Descriptions", "description_of", "render_table", "rich_table"]

HEADER: tuple[str, ...] = ("board", "circuit", "check", "outcome", "value", "limit", "unit", "detail")

_STYLE = {"pass": "green", "fail": "bold red", "investigate": "yellow", "incomplete": "cyan"}


def _outcome_cell(outcome: str, policy: Policy, *, upper: bool) -> str:
    shown = outcome.upper() if upper else outcome
    treated = policy.treat(outcome)
    natural = Treatment.FAIL if outcome == "fail" else Treatment.PASS
    if treated is not natural:
        shown += f" → {treated.value}"
    return shown


Descriptions = Mapping[tuple[str, str], str]


def description_of(verdict: Mapping[str, Any], descriptions: Descriptions | None) -> str:
    """The circuit's description: the verdict's own, else the caller's table of them, else ''."""
    found = verdict.get("description") or (descriptions or {}).get((verdict["board"], verdict["circuit"]))
    return str(found) if found else ""


def _rows(body: dict[str, Any], policy: Policy, descriptions: Descriptions | None) -> list[tuple[str, ...]]:
    rows: list[tuple[str, ...]] = []
    for verdict in body["verdicts"]:
        rows.append((printable(verdict["board"]), printable(verdict["circuit"]), "(circuit)",
                     _outcome_cell(verdict["outcome"], policy, upper=True), "", "", "",
                     printable(description_of(verdict, descriptions))))
        for name, check in zip(case_names(verdict["checks"]), verdict["checks"], strict=True):
            rel = "" if check["relation"] in (None, "=") else check["relation"]
            value, limit = meter_pair(check["value"], check["limit"])
            rows.append(("", "", name, _outcome_cell(check["outcome"], policy, upper=False),
                         "" if check["value"] is None else rel + value, limit, check["unit"] or "",
                         printable(trade_text(check["detail"] or ""))))
    return rows


def _footer(body: dict[str, Any], policy: Policy) -> list[str]:
    lines = ["", ", ".join(f"{k}: {v}" for k, v in body["summary"].items())]
    failing = policy.failing_circuits(body["verdicts"])
    lines.append(f"policy: {policy.describe()} — circuits failing under it: {failing}")
    for kind, items in (("rejected", body["rejected"]), ("warning", body.get("warnings") or ())):
        for item in items:
            where = item.get("pointer") or f"line {item.get('line')}"
            named = item.get("column") or (word_for(item["field"]) if item.get("field") else "")
            about = f" ({named})" if named else ""
            source = item.get("file", "")
            text = f"{kind} {source} {where}{about}: {trade_text(str(item.get('reason', '')))}"
            lines.append(printable(text.replace("  ", " ")))
    lines += ["", "CAUTION: " + body["notice"]]
    return lines


def render_table(body: dict[str, Any], policy: Policy, descriptions: Descriptions | None = None) -> str:
    ruleset = body["ruleset"]
    lines = [f"ruleset: {ruleset.get('id')} — {ruleset.get('title', '')}"]
    rows = _rows(body, policy, descriptions)
    widths = [max([len(h), *(len(r[i]) for r in rows)]) for i, h in enumerate(HEADER[:-1])]
    for row in [HEADER, *rows]:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row[:-1], widths, strict=True))
                     + "  " + row[-1])
    lines += _footer(body, policy)
    return "\n".join(line.rstrip() for line in lines) + "\n"


def rich_table(body: dict[str, Any], policy: Policy, descriptions: Descriptions | None = None) -> Any:
    """A rich renderable of the same content (imported late: only a terminal needs rich)."""
    # measured start-up cost: rich.console + rich.table ≈ 43 ms (python -X importtime), which
    # every API worker and every `ohmtally verify` into a pipe would pay for nothing
    from rich.console import Group  # measured start-up cost, see above
    from rich.table import Table  # measured start-up cost, see above
    from rich.text import Text  # measured start-up cost, see above

    ruleset = body["ruleset"]
    table = Table(title=Text(f"{ruleset.get('id')} — {ruleset.get('title', '')}"),
                  show_lines=False, header_style="bold")
    wraps = ("board", "circuit", "detail")  # user text may fold; ids, outcomes and figures stay whole
    for name in HEADER:
        table.add_column(name, overflow="fold", no_wrap=name not in wraps,
                         ratio=1 if name == "detail" else None)
    for row in _rows(body, policy, descriptions):
        outcome = row[3].split(" ")[0].lower()
        cells = [Text(cell) for cell in row]
        cells[3].stylize(_STYLE.get(outcome, ""))
        if row[2] == "(circuit)":
            for cell in cells[:3]:
                cell.stylize("bold")
        table.add_row(*cells)
    return Group(table, *(Text(line) for line in _footer(body, policy)))
