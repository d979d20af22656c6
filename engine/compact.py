"""The compact view: outcomes and figures without prose, for systems that store outcomes.

A compact verdict is JSON-ready data::

    {"board": "DB1", "circuit": "3", "outcome": "fail",
     "checks": [["loop_impedance", "fail", 1.62, "=", 1.37, "Ω", "max_zs.voltage_factor"], ...]}

one row per result, in the full view's order: ``[check, outcome, value,
relation, limit, unit, basis_id]``. ``basis_id`` is the ruleset entry the
result rests on (``section.key``, which ``GET /v1/rulesets/<id>`` lists), or
``record:<field>`` where the limit is the record's own figure (the designer's
maximum Zs), or ``null``.

An answer of many verdicts repeats the same few ``(check, unit, basis_id)``
triples in every row; :func:`encode` writes each once in a ``legend`` and the
rows as ``[legend index, outcome, value, relation, limit]`` (about half the
bytes: tests/bench), and :func:`decode` reads that back.

Invariants:
- A compact verdict carries exactly the outcomes, values (rounded as the full
  view rounds them) and limits of the full verdict of the same circuit
  (``tests/engine/test_compact_view.py``, a hypothesis test).
- :func:`decode` of :func:`encode` gives the verdicts back, row for row.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any, TypedDict

__all__ = ["COMPACT_COLUMNS", "LEGEND_COLUMNS", "CompactRow", "CompactVerdict", "EncodedAnswer", "decode",
           "encode"]

#: What each position of a compact row holds.
COMPACT_COLUMNS = ("check", "outcome", "value", "relation", "limit", "unit", "basis_id")
#: What each position of a legend entry holds (:func:`encode`).
LEGEND_COLUMNS = ("check", "unit", "basis_id")

CompactRow = tuple[str, str, float | None, str, float | None, str | None, str | None]


class CompactVerdict(TypedDict):
    """A circuit's verdict in the compact view (see the module's docstring)."""

    board: str
    circuit: str
    outcome: str
    checks: list[CompactRow]


class EncodedAnswer(TypedDict):
    """Compact verdicts with their ``(check, unit, basis_id)`` triples written once (:func:`encode`)."""

    legend: list[tuple[str, str | None, str | None]]
    verdicts: list[dict[str, Any]]


def encode(verdicts: Iterable[CompactVerdict]) -> EncodedAnswer:
    """The verdicts with a legend: rows become ``[legend index, outcome, value, relation, limit]``."""
    index: dict[tuple[str, str | None, str | None], int] = {}
    out: list[dict[str, Any]] = []
    for verdict in verdicts:
        rows = []
        for check, outcome, value, relation, limit, unit, basis_id in verdict["checks"]:
            key = (check, unit, basis_id)
            at = index.get(key)
            if at is None:
                at = index[key] = len(index)
            rows.append((at, outcome, value, relation, limit))
        out.append({"board": verdict["board"], "circuit": verdict["circuit"], "outcome": verdict["outcome"],
                    "checks": rows})
    return {"legend": list(index), "verdicts": out}


def decode(answer: EncodedAnswer | dict[str, Any]) -> list[CompactVerdict]:
    """The compact verdicts an :func:`encode` answer (or its parsed JSON) holds."""
    legend = [tuple(entry) for entry in answer["legend"]]
    verdicts: list[CompactVerdict] = []
    for verdict in answer["verdicts"]:
        rows: list[CompactRow] = []
        for at, outcome, value, relation, limit in verdict["checks"]:
            check, unit, basis_id = legend[at]
            rows.append((check, outcome, value, relation, limit, unit, basis_id))
        verdicts.append({"board": verdict["board"], "circuit": verdict["circuit"],
                         "outcome": verdict["outcome"], "checks": rows})
    return verdicts
