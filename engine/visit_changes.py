"""What changed since the previous visit, for the firm's report: a listing, not a verdict.

:func:`visit_changes` lists, against a :class:`engine.visits.PreviousVisit`:
each matched circuit's readings and records that differ (with whether each
change needs a look, by :mod:`engine.visit_compare`'s rules), the circuits that
appeared and the ones gone, previous circuits an ambiguous rename map matched to
nothing, and the supply's Ze at the origin and each board's Zdb.

Invariants:
- Each circuit's rows are exactly the comparisons the ``previous_visit`` check
  makes (the same effective values, the same thresholds), restricted to the
  fields whose value differs; ``needs_look`` is true where the check gives
  ``investigate``, ``null`` where a bound settles nothing.
- Circuits and boards are listed in the current visit's order; gone circuits in
  the previous visit's order.
- Pure: plain dicts out, ready to serialise.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from .context import CircuitView, Context
from .readings import Reading
from .records import CircuitRecord
from .results import round_figure
from .ruleset import Ruleset, load_ruleset
from .site import Site
from .visit_compare import FieldChange, compare_circuit, reading_dict
from .visits import Key, PreviousVisit, prepare

__all__ = ["visit_changes"]


def _differs(change: FieldChange) -> bool:
    then, now = change.previous, change.current
    if isinstance(then, Reading) and isinstance(now, Reading):
        return (then.value, then.relation) != (now.value, now.relation)
    return bool(then != now)


def _key(key: Key) -> dict[str, str]:
    return {"board": key[0], "circuit": key[1]}


def _supply_row(where: str, name: str, then: Any, now: Any, rules: Ruleset) -> dict[str, Any] | None:
    if not isinstance(then, Reading) or not isinstance(now, Reading):
        return None
    if (then.value is not None and then.value <= 0) or (now.value is not None and now.value <= 0):
        return None  # impossible: the circuits' own checks say so
    prev_view = CircuitView(CircuitRecord(board="", circuit="", ze_ohm=then), rules, tracking=False)
    now_view = CircuitView(CircuitRecord(board="", circuit="", ze_ohm=now), rules, tracking=False)
    changes = [c for c in compare_circuit(now_view.raw, prev_view.raw, rules) if c.field == "ze_ohm"]
    if not changes or not _differs(changes[0]):
        return None
    change = changes[0]
    return {"where": where, "field": name, "previous": reading_dict(then, "Ω"),
            "current": reading_dict(now, "Ω"), "change": round_figure(change.change),
            "fraction": round_figure(change.fraction),
            "needs_look": change.needs_look}


def _supply(site: Site | None, visit: PreviousVisit, rules: Ruleset) -> list[dict[str, Any]]:
    rows: list[dict[str, Any]] = []
    old_site = visit.site
    if site is None or old_site is None:
        return rows
    if site.installation is not None and old_site.installation is not None:
        row = _supply_row("installation", "ze_ohm", old_site.installation.ze_ohm, site.installation.ze_ohm,
                          rules)
        if row is not None:
            rows.append(row)
    old_for = {visit.boards.get(old, old): record for old, record in old_site.boards.items()}
    for board, record in site.boards.items():
        then = old_for.get(board)
        if then is not None:
            row = _supply_row(f"board {board}", "zdb_ohm", then.zdb_ohm, record.zdb_ohm, rules)
            if row is not None:
                rows.append(row)
    return rows


def visit_changes(records: Iterable[CircuitRecord], previous: PreviousVisit,
                  ruleset: Ruleset | str | None = None, *, site: Site | None = None) -> dict[str, Any]:
    """``{previous, circuits, appeared, gone, ambiguous, supply}`` (see the module's invariants)."""
    rules = load_ruleset(ruleset)
    prepared = prepare(previous)
    ctx = Context.build(records, rules, site, tracking=False)
    circuits: list[dict[str, Any]] = []
    appeared: list[dict[str, str]] = []
    matched: set[Key] = set()
    for key, record in ctx.records.items():
        old = prepared.old_key(key)
        if old is None:
            appeared.append(_key(key))
            continue
        matched.add(old)
        before = CircuitView(prepared.effective[old], rules, prepared.sources.get(old, {}), tracking=False)
        rows = [c for c in compare_circuit(ctx.view(record).raw, before.raw, rules) if _differs(c)]
        if rows:
            circuits.append({**_key(key), "previous_key": _key(old),
                             "needs_look": any(c.needs_look is not False for c in rows),
                             "changes": [c.as_dict() for c in rows]})
    ambiguous = set(prepared.ambiguous)
    gone = [_key(old) for old in prepared.effective if old not in matched and old not in ambiguous]
    return {"previous": previous.where(), "circuits": circuits, "appeared": appeared, "gone": gone,
            "ambiguous": [_key(old) for old in prepared.ambiguous], "supply": _supply(site, previous, rules)}

