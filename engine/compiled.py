"""What a ruleset gives every circuit alike, worked out once per ruleset object, not once per circuit.

Limits, factors, tables and the text of each basis are the same for every
circuit judged by one ruleset; so is the maximum Zs of a B32 at 230 V and 0.4 s.
Checks used to look each one up again for every circuit (~56 look-ups a
circuit, tests/bench). Here they are worked out once per ruleset object.

Invariants:
- :func:`derived` returns ``build(rules)`` for a pure ``build``; :func:`group_memo`
  is a dictionary for the pure look-ups of one device or cable group under one
  ruleset (the caller's key names the function and its arguments). Both live
  in one memo keyed by the ruleset object's identity; the object is held beside
  its entry, so an id is never reused while it is cached.
- Bounded: at most :data:`RULESETS` rulesets (user rulesets come and go; the
  built-in ones are worked out again once if pushed out) and
  :data:`GROUP_ENTRIES` entries per group memo (cleared whole when full: a
  job has tens of device groups, not thousands).
- Only pure functions of the ruleset and their arguments are memoised, and only
  immutable values are kept: nothing a call does can reach another call through
  here. A build that raises (a user's ruleset lacking a value) keeps nothing, so
  the next use raises the same error at its own point of use.
- Nothing else in the engine is process-wide.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, TypeVar

from .findings import Basis
from .ruleset import Ruleset

__all__ = ["GROUP_ENTRIES", "MISS", "RULESETS", "basis", "derived", "group_memo", "number", "remember"]

RULESETS = 16
GROUP_ENTRIES = 4096
T = TypeVar("T")

_MEMO: dict[int, tuple[Ruleset, dict[Any, Any]]] = {}
_LAST: list[tuple[Ruleset | None, dict[Any, Any]]] = [(None, {})]  # the entry asked for last (of _MEMO)
#: What ``memo.get(key, MISS)`` gives for a key not remembered (``None`` may be a remembered answer).
MISS: Any = object()


def _slot(rules: Ruleset) -> dict[Any, Any]:
    last = _LAST[0]
    if last[0] is rules:  # one ruleset for a whole call: the common case, one identity test
        return last[1]
    hit = _MEMO.get(id(rules))
    if hit is None or hit[0] is not rules:
        if len(_MEMO) >= RULESETS:
            _MEMO.clear()
        hit = _MEMO[id(rules)] = (rules, {})
    _LAST[0] = hit
    return hit[1]


def derived(rules: Ruleset, build: Callable[[Ruleset], T]) -> T:
    """``build(rules)``, once per ruleset object."""
    slot = _slot(rules)
    try:
        found: T = slot[build]
    except KeyError:
        found = slot[build] = build(rules)
    return found


def group_memo(rules: Ruleset) -> dict[Any, Any]:
    """The ruleset's memo for device and cable group look-ups (bounded: see the module's invariants)."""
    slot = _slot(rules)
    memo: dict[Any, Any] | None = slot.get(group_memo)
    if memo is None or len(memo) >= GROUP_ENTRIES:
        memo = slot[group_memo] = {}
    return memo


def remember(memo: dict[Any, Any], key: Any, value: T) -> T:
    """Keep ``value`` under ``key`` in a group memo, clearing it first when it is full."""
    if len(memo) >= GROUP_ENTRIES:
        memo.clear()
    memo[key] = value
    return value


def basis(rules: Ruleset, section: str, key: str) -> Basis:
    """The basis of entry ``section.key``: its id and its source text (raises if the ruleset lacks it)."""
    slot = _slot(rules)
    found: Basis | None = slot.get(("basis", section, key))
    if found is None:
        found = slot[("basis", section, key)] = Basis(id=f"{section}.{key}", text=rules.basis(section, key))
    return found


def number(rules: Ruleset, section: str, key: str) -> float | None:
    """A figure for a compiled table: the entry as a float, or ``None`` where it is absent or not a number.

    A check that finds ``None`` where it needs the figure asks the ruleset again
    (``float(rules.value(section, key))``), which raises the error it always raised.
    """
    found = rules.sections.get(section, {}).get(key)
    if found is None:
        return None
    try:
        return float(found.value)
    except (TypeError, ValueError):
        return None
