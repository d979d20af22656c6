"""What a check computes: numbers first, the words only when a view shows them.

A check yields :class:`Finding` values. A finding holds what every view needs
(the check id, the outcome, the value and its relation, the limit, the unit and
the basis) and what only the full view shows: the limit's kind, the method,
the inputs and the sentence. The sentence is kept as text or as a renderer (a
callable of no arguments over values the check already computed), so a view
that never shows it never builds it: :func:`to_result` renders it for the full
view (:class:`engine.results.CheckResult`), :func:`compact_row` never does.
The inputs may be left to be built in the same way.

Invariants:
- A renderer reads only values fixed when the finding was made: it never reads
  the circuit view (which would report a default as used) and never sees a
  variable the check assigns again later. Rendering twice gives the same text.
- :class:`Basis` names the ruleset entry a judgement rests on (``section.key``,
  which ``GET /v1/rulesets/<id>`` lists, so a client resolves it), or
  ``record:<field>`` where the limit is the record's own figure (the designer's
  maximum Zs), with the published text the full view prints. A finding's basis
  is one :class:`Basis`, or several parts printed joined by ``"; "`` whose first
  part names the id (a plain text part has none).
- A compact row carries the same outcome, value and limit as the full view
  (both round through :func:`engine.results.round_figure`).
- Findings are named tuples, not frozen dataclasses: a circuit makes about
  fifteen, and a frozen dataclass costs ~15× a tuple to build (each field set
  through ``object.__setattr__``; 2.39 µs against 0.16 µs per finding on the
  bench host). They never leave the engine: the full view hands out
  :class:`engine.results.CheckResult`, the compact view plain rows.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, NamedTuple

from .compact import CompactRow
from .results import NO_INPUTS, OUTCOME_TEXT, CheckResult, LimitKind, Outcome, round_figure

__all__ = ["NO_INPUTS", "Basis", "BasisParts", "CompactRow", "Detail", "Finding", "Inputs", "basis_id",
           "basis_text", "compact_row", "found", "inputs_of", "render", "to_result"]

#: A sentence, or what renders it when a view shows it.
Detail = str | Callable[[], str]
#: The figures a check used, or what builds them when a view shows them.
Inputs = Mapping[str, Any] | Callable[[], Mapping[str, Any]]


@dataclass(frozen=True, slots=True, eq=False)
class Basis:
    """A ruleset entry (or a record's own figure) a judgement rests on, and its published text.

    Made once per ruleset and entry (:func:`engine.compiled.basis`), so identity
    equality is enough (``eq=False``).
    """

    id: str | None
    text: str


BasisParts = Basis | str | tuple["Basis | str", ...]


class Finding(NamedTuple):
    """One judged thing, numbers first (see the module's invariants)."""

    check: str
    outcome: Outcome
    value: float | None
    relation: str
    limit: float | None
    unit: str | None
    basis: BasisParts | None
    limit_kind: LimitKind | None
    method: str | None
    inputs: Inputs
    detail: Detail


_new = tuple.__new__


def found(check: str, outcome: Outcome, *, detail: Detail, value: float | None = None, relation: str = "=",
          limit: float | None = None, limit_kind: LimitKind | None = None, unit: str | None = None,
          method: str | None = None, basis: BasisParts | None = None,
          inputs: Inputs = NO_INPUTS) -> Finding:
    """A finding by keyword, as a check writes one (the tuple is built directly: no per-field cost)."""
    return _new(Finding, (check, outcome, value, relation, limit, unit, basis, limit_kind, method, inputs,
                          detail))


def render(detail: Detail) -> str:
    return detail if type(detail) is str else detail()  # type: ignore[operator]


def inputs_of(finding: Finding) -> Mapping[str, Any]:
    """The finding's inputs, built now if they were left to be built."""
    inputs = finding.inputs
    return inputs() if callable(inputs) else inputs


def basis_text(basis: BasisParts | None) -> str | None:
    if basis is None:
        return None
    if type(basis) is Basis:
        return basis.text
    if type(basis) is str:
        return basis
    return "; ".join(part if type(part) is str else part.text for part in basis)  # type: ignore[union-attr]


def basis_id(basis: BasisParts | None) -> str | None:
    if basis is None:
        return None
    if type(basis) is Basis:
        return basis.id
    if type(basis) is str:
        return None
    first = basis[0]  # type: ignore[index]
    return first.id if type(first) is Basis else None


def to_result(finding: Finding) -> CheckResult:
    """The full view's result: every field, the sentence rendered."""
    return CheckResult(check=finding.check, outcome=finding.outcome, detail=render(finding.detail),
                       value=finding.value, relation=finding.relation, limit=finding.limit,
                       limit_kind=finding.limit_kind, unit=finding.unit, method=finding.method,
                       basis=basis_text(finding.basis), basis_id=basis_id(finding.basis),
                       inputs=inputs_of(finding))


def compact_row(finding: Finding) -> CompactRow:
    """``[check, outcome, value, relation, limit, unit, basis_id]``: no text is built."""
    value, limit = finding.value, finding.limit
    return (finding.check, OUTCOME_TEXT[finding.outcome], None if value is None else round_figure(value),
            finding.relation, None if limit is None else round_figure(limit), finding.unit,
            basis_id(finding.basis))
