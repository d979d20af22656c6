"""Rendering a verify body for people (table) and programs (json)."""

from __future__ import annotations

import json
from typing import Any

__all__ = ["FORMATS", "render"]

FORMATS: tuple[str, ...] = ("table", "json")


def render(body: dict[str, Any], fmt: str) -> str:
    if fmt == "json":
        return json.dumps(body, ensure_ascii=False, indent=2) + "\n"
    return _table(body)


def _fmt(value: Any) -> str:
    if value is None:
        return "-"
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def _table(body: dict[str, Any]) -> str:
    lines = [f"ruleset: {body['ruleset']['id']} — {body['ruleset']['title']}"]
    header = ("board", "circuit", "check", "outcome", "value", "limit", "unit", "detail")
    rows: list[tuple[str, ...]] = []
    for verdict in body["verdicts"]:
        rows.append((verdict["board"], verdict["circuit"], "(circuit)",
                     verdict["outcome"].upper(), "", "", "", ""))
        for check in verdict["checks"]:
            rel = "" if check["relation"] == "=" else check["relation"]
            rows.append(("", "", check["check"], check["outcome"],
                         rel + _fmt(check["value"]), _fmt(check["limit"]),
                         check["unit"] or "", check["detail"]))
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h)
              for i, h in enumerate(header[:-1])]
    lines.append("  ".join(h.ljust(w) for h, w in zip(header[:-1], widths, strict=True))
                 + "  detail")
    for row in rows:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row[:-1], widths, strict=True))
                     + "  " + row[-1])
    summary = body["summary"]
    lines.append("")
    lines.append(", ".join(f"{k}: {v}" for k, v in summary.items()))
    for bad in body["rejected"]:
        where = bad.get("pointer") or f"line {bad.get('line')}"
        lines.append(f"rejected {bad.get('file', '')} {where}: {bad['reason']}")
    lines.append("")
    lines.append("CAUTION: " + body["notice"])
    return "\n".join(lines) + "\n"
