"""The maximum disconnection time a circuit must meet (Chapter 41).

Invariants:
- ``max_disconnection_s`` on the record may tighten the regulation's time, never
  loosen it: a longer figure is refused, the regulation's time is used and the
  result says so (``refused_override``). Where the regulation sets no time
  (IT systems, a U0 outside Table 41.1) the designer's figure stands; where the
  record lacks what decides the regulation's time, the designer's figure stands
  only if it is no longer than the shortest time the regulation could require.
- Reduced low voltage circuits (U0 of 55 V or 63.5 V, BS 7671 Reg. 411.8): the
  ruleset's 5 s, whatever the earthing (rulesets without the entry, such as
  IEC 60364, use Table 41.1).
- Table 41.1 applies to final circuits within the ruleset's scope: up to
  ``final_socket_max_a`` with socket-outlets (a ring has them), up to
  ``final_fixed_max_a`` otherwise (BS 7671:2018 411.3.2.2). Others, and every
  distribution circuit: TN ``other_tn_s`` (411.3.2.3), TT ``other_tt_s`` (411.3.2.4).
- Only the a.c. columns are used; a U0 at or below the table's lowest band
  (ELV) has no table time. IT systems have none either: their second-fault
  conditions (411.6.4) need the designer's figure.
- Defaults (``circuit_role``, ``circuit_form``, ``nominal_voltage_v``) are read
  through the view only when the answer depends on them, so only those used
  are reported. What the ruleset makes of the values read is a pure function
  of them, kept per ruleset (:mod:`engine.compiled`): the answers are shared,
  immutable objects.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, TypeVar

from ..compiled import MISS, derived, group_memo, remember
from ..context import CircuitView
from ..ruleset import Ruleset
from .common import Missing, positive

__all__ = ["Disconnection", "disconnection_time", "earthing_system", "regulation_time"]

SECTION = "disconnection"
T = TypeVar("T")


@dataclass(frozen=True, slots=True, kw_only=True)
class Disconnection:
    seconds: float
    basis: str
    reason: str
    refused_override: float | None = None  # a longer max_disconnection_s the regulation's time replaced


def earthing_system(earthing: str | None) -> str | None:
    """``TN-S``/``TN-C-S`` → ``TN``; ``TT``; ``IT``; unknown → ``None``."""
    if earthing in ("TN-S", "TN-C-S"):
        return "TN"
    return earthing if earthing in ("TT", "IT") else None


def _table_time(rules: Ruleset, system: str, u0: float) -> float | None:
    bands: list[dict[str, Any]] = rules.value(SECTION, "table_41_1_ac_s").get(system, [])
    for band in bands:
        above, up_to = band["above_v"], band["up_to_v"]
        if u0 > above and (up_to is None or u0 <= up_to):
            return float(band["seconds"])
    return None


def _scope_limits(rules: Ruleset) -> tuple[float, float]:
    return float(rules.value(SECTION, "final_socket_max_a")), float(rules.value(SECTION, "final_fixed_max_a"))


def _in_table_scope(view: CircuitView, rules: Ruleset, rating: float) -> bool | Missing:
    socket_max, fixed_max = derived(rules, _scope_limits)
    if rating <= min(socket_max, fixed_max):
        return True  # within scope whatever the circuit feeds
    if rating > max(socket_max, fixed_max):
        return False
    sockets = view.get("socket_outlets")  # a ring has them: inferred and reported by the view
    if sockets is None:
        return Missing(fields=("socket_outlets",),
                       reason=f"between {min(socket_max, fixed_max):g} A and "
                              f"{max(socket_max, fixed_max):g} A the time depends on socket-outlets")
    return rating <= (socket_max if sockets else fixed_max)


def _reduced_low_voltage(rules: Ruleset, u0: float) -> Disconnection | None:
    nominal = rules.get(SECTION, "reduced_low_voltage_u0_v") or ()
    seconds = rules.get(SECTION, "reduced_low_voltage_s")
    if seconds is None or not any(math.isclose(u0, float(v), rel_tol=1e-9) for v in nominal):
        return None
    return Disconnection(seconds=float(seconds), basis=rules.basis(SECTION, "reduced_low_voltage_s"),
                         reason=f"reduced low voltage circuit, U0 = {u0:g} V")


def _other(rules: Ruleset, system: str, why: str) -> Disconnection:
    key = "other_tn_s" if system == "TN" else "other_tt_s"
    return Disconnection(seconds=float(rules.value(SECTION, key)), basis=rules.basis(SECTION, key),
                         reason=f"{why}, {system} system")


def _final(rules: Ruleset, system: str, u0: float | None, u0_raw: Any) -> Disconnection | Missing:
    seconds = _table_time(rules, system, u0) if u0 is not None else None
    if seconds is None:
        return Missing(fields=("max_disconnection_s",),
                       reason=f"Table 41.1 gives no a.c. time for U0 = {u0_raw} V")
    return Disconnection(seconds=seconds, basis=rules.basis(SECTION, "table_41_1_ac_s"),
                         reason=f"final circuit, {system} system, U0 = {u0:g} V")


_NO_EARTHING = Missing(fields=("earthing",), reason="disconnection times depend on the earthing system")
_IT = Missing(fields=("max_disconnection_s",),
              reason="IT systems: the second-fault time (411.6.4) is the designer's")
_NO_RATING = Missing(fields=("device_rating_a",), reason="the scope of Table 41.1 is by rating")


def _memo(rules: Ruleset, key: tuple[Any, ...], work: Callable[[], T]) -> T:
    """``work()``, a pure function of the ruleset and ``key``, kept in the ruleset's group memo."""
    memo = group_memo(rules)
    found = memo.get(key, MISS)
    if found is MISS:
        found = remember(memo, key, work())
    answer: T = found
    return answer


def regulation_time(view: CircuitView, rules: Ruleset) -> Disconnection | Missing:
    """The time the regulation gives the circuit, without the record's own figure.

    The circuit's values are read here, in the order the answer needs them (so only the
    defaults used are reported); what the ruleset makes of them is kept per ruleset.
    """
    u0_raw = view.get("nominal_voltage_v")
    u0 = None if u0_raw is None else float(u0_raw)
    if u0 is not None:
        reduced = _memo(rules, ("disconnection.reduced", u0), lambda: _reduced_low_voltage(rules, u0))
        if reduced is not None:
            return reduced
    system = earthing_system(view.read.earthing)
    if system is None:
        return _NO_EARTHING
    if system == "IT":
        return _IT
    if view.get("circuit_role") == "distribution":
        return _memo(rules, ("disconnection.other", system, True),
                     lambda: _other(rules, system, "distribution circuit"))
    rating = positive(view.read.device_rating_a)
    if rating is None:
        return _NO_RATING
    scope = _in_table_scope(view, rules, rating)
    if isinstance(scope, Missing):
        return scope
    if not scope:
        return _memo(rules, ("disconnection.other", system, False),
                     lambda: _other(rules, system, "final circuit outside the scope of Table 41.1"))
    return _memo(rules, ("disconnection.final", system, u0, type(u0_raw), u0_raw),
                 lambda: _final(rules, system, u0, u0_raw))


def _strictest(view: CircuitView, rules: Ruleset) -> float | None:
    """The shortest time the regulation could require of this circuit, whatever is unrecorded."""
    u0 = view.get("nominal_voltage_v")
    if u0 is None:
        return None
    system = earthing_system(view.read.earthing)
    times = [_table_time(rules, s, float(u0)) for s in ((system,) if system else ("TN", "TT"))]
    found = [t for t in times if t is not None]
    return min(found) if found else None


def disconnection_time(view: CircuitView, rules: Ruleset) -> Disconnection | Missing:
    """The time a check judges against: the regulation's, or the record's where it is not longer."""
    regulation = regulation_time(view, rules)
    recorded = view.read.max_disconnection_s  # judged above zero by the view
    if recorded is None:
        return regulation
    override = float(recorded)
    designer = "record: max_disconnection_s (the designer's figure)"
    if isinstance(regulation, Disconnection):
        if override <= regulation.seconds:
            return Disconnection(seconds=override, basis=designer,
                                 reason=f"given on the record, within the {regulation.seconds:g} s "
                                        f"the regulation requires ({regulation.reason})")
        return Disconnection(seconds=regulation.seconds, basis=regulation.basis,
                             reason=regulation.reason, refused_override=override)
    if regulation.fields == ("max_disconnection_s",):  # the regulation sets no time here
        return Disconnection(seconds=override, basis=designer,
                             reason=f"given on the record ({regulation.reason})")
    strictest = _strictest(view, rules)
    if strictest is not None and override <= strictest:
        return Disconnection(seconds=override, basis=designer,
                             reason=f"given on the record, within the shortest time the regulation "
                                    f"could require here ({strictest:g} s)")
    return Missing(fields=regulation.fields,
                   reason=f"{regulation.reason}: needed to tell whether the recorded {override:g} s is "
                          "within the regulation's time")
