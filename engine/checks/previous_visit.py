"""Previous visit: readings against the same circuit's at the last inspection (periodic inspection)

Applies only when the call is given a previous visit (``verify(..., previous=)``)
and this circuit matched one of its circuits (:mod:`engine.visits`: by board and
circuit, or through the visit's explicit rename map). A circuit new since the
last visit, or a call without a previous visit, gets no result.

Invariants:
- The comparisons and their thresholds are :mod:`engine.visit_compare`'s, with
  the ruleset's ``previous_visit`` figures (ohmtally's choice, common practice:
  no standard gives a number).
- One ``investigate`` result per field that changed beyond its thresholds, its
  value the reading now, its limit the reading beyond which the change needs a
  look, and ``inputs.previous`` = ``{value, relation, unit, date, job}`` of the
  previous visit beside ``inputs.change`` (and ``inputs.fraction``).
- One ``investigate`` result per comparison a bound left unsettled (method
  ``bound_unsettled``): nothing is passed that the readings do not show.
- Otherwise, when at least one field was compared, one ``pass`` (method
  ``unchanged``) listing the fields compared. With no field recorded usably on
  both visits, no result: there is nothing to judge.
- Never ``fail``: a change within the limits is a reason to look, and the
  circuit's own checks judge the limits.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ..compiled import derived
from ..context import CircuitView, Context
from ..findings import Basis, Finding, found
from ..readings import Reading
from ..results import Outcome
from ..ruleset import Ruleset
from ..visit_compare import SECTION, FieldChange, compare_circuit, reading_dict
from ..words import word_for

__all__ = ["CHECK", "run"]

CHECK = "previous_visit"


def _main(rules: Ruleset) -> Basis:
    return Basis(id=f"{SECTION}.basis", text=str(rules.value(SECTION, "basis")))


def _basis(rules: Ruleset, change: FieldChange | None = None) -> tuple[Basis | str, ...] | Basis:
    main = derived(rules, _main)
    if change is None or not change.threshold_keys:
        return main
    figures = ", ".join(f"{key} {rules.value(SECTION, key)}" for key in change.threshold_keys)
    return (main, f"thresholds ohmtally's choice, common practice: {figures}")


def _shown(value: Any, unit: str | None) -> str:
    if isinstance(value, Reading):
        return value.display(unit)
    shown = f"{value:g}" if isinstance(value, float) else str(value)
    return f"{shown} {unit or ''}".strip()


def _sentence(change: FieldChange, when: str) -> str:
    what, unit = word_for(change.field), change.unit
    was, now = _shown(change.previous, unit), _shown(change.current, unit)
    if change.rule == "changed":
        return (f"{what} was {was} at the previous visit ({when}) and is {now} now: confirm the change was "
                "intended and the records follow it")
    if change.needs_look is None:
        return (f"{what} {now} against {was} at the previous visit ({when}): a bounded reading does not "
                "settle whether it changed beyond the thresholds; compare the readings")
    how = {"fall": "fell", "rise": "rose", "either": "changed"}[change.rule]
    by = "" if change.fraction is None else f" ({change.fraction:+.0%})"
    side = "below" if change.limit_kind == "min" else "above"
    limit = "" if change.limit is None else f", {side} {change.limit:.3g} {unit}"
    return (f"{what} {how} from {was} at the previous visit ({when}) to {now}{by}{limit}: "
            "within the limits or not, a change like this needs a look")


def _finding(change: FieldChange, visit: dict[str, Any], rules: Ruleset) -> Finding:
    current = change.current
    value = current.value if isinstance(current, Reading) else None
    relation = current.relation if isinstance(current, Reading) else "="
    when = visit["date"] or f"job {visit['job']}"
    previous = {**reading_dict(change.previous, change.unit), **visit}
    inputs: dict[str, Any] = {"field": change.field, "previous": previous, "change": change.change,
                              "fraction": change.fraction}
    if change.rule == "changed":
        inputs["current"] = change.current
    method = "bound_unsettled" if change.needs_look is None else f"{change.rule}_since_previous"
    return found(CHECK, Outcome.INVESTIGATE, value=value, relation=relation, limit=change.limit,
                 limit_kind=change.limit_kind, unit=change.unit, method=method, basis=_basis(rules, change),
                 inputs=inputs, detail=lambda: _sentence(change, when))


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    prepared = ctx.previous
    if prepared is None:
        return
    old = prepared.old_key(view.record.key)
    if old is None:
        return
    before = CircuitView(prepared.effective[old], ctx.ruleset, prepared.sources.get(old, {}), tracking=False)
    changes = compare_circuit(view.raw, before.raw, ctx.ruleset)
    if not changes:
        return
    visit = prepared.visit.where()
    looks = [change for change in changes if change.needs_look is not False]
    for change in looks:
        yield _finding(change, visit, ctx.ruleset)
    if looks:
        return
    compared = [change.field for change in changes]
    when = visit["date"] or f"job {visit['job']}"
    renamed = old != view.record.key
    yield found(CHECK, Outcome.PASS, method="unchanged", basis=_basis(ctx.ruleset),
                inputs={"compared": compared, "visit": visit,
                        **({"previous_key": f"{old[0]}/{old[1]}"} if renamed else {})},
                detail=lambda: (f"{len(compared)} readings and records compared with the previous visit "
                                f"({when}{f', as {old[0]}/{old[1]}' if renamed else ''}): none changed "
                                "beyond the thresholds"))
