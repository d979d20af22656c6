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
  are reported.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..context import CircuitView
from ..ruleset import Ruleset
from .common import Missing, positive

__all__ = ["Disconnection", "disconnection_time", "earthing_system", "regulation_time"]

SECTION = "disconnection"


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


def _in_table_scope(view: CircuitView, rules: Ruleset, rating: float) -> bool | Missing:
    socket_max = float(rules.value(SECTION, "final_socket_max_a"))
    fixed_max = float(rules.value(SECTION, "final_fixed_max_a"))
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


def regulation_time(view: CircuitView, rules: Ruleset) -> Disconnection | Missing:
    """The time the regulation gives the circuit, without the record's own figure."""
    u0_raw = view.get("nominal_voltage_v")
    u0 = None if u0_raw is None else float(u0_raw)
    if u0 is not None:
        reduced = _reduced_low_voltage(rules, u0)
        if reduced is not None:
            return reduced
    system = earthing_system(view.raw("earthing"))
    if system is None:
        return Missing(fields=("earthing",), reason="disconnection times depend on the earthing system")
    if system == "IT":
        return Missing(fields=("max_disconnection_s",),
                       reason="IT systems: the second-fault time (411.6.4) is the designer's")
    other_key = "other_tn_s" if system == "TN" else "other_tt_s"
    if view.get("circuit_role") == "distribution":
        return Disconnection(seconds=float(rules.value(SECTION, other_key)),
                             basis=rules.basis(SECTION, other_key),
                             reason=f"distribution circuit, {system} system")
    rating = positive(view.raw("device_rating_a"))
    if rating is None:
        return Missing(fields=("device_rating_a",), reason="the scope of Table 41.1 is by rating")
    scope = _in_table_scope(view, rules, rating)
    if isinstance(scope, Missing):
        return scope
    if not scope:
        return Disconnection(seconds=float(rules.value(SECTION, other_key)),
                             basis=rules.basis(SECTION, other_key),
                             reason=f"final circuit outside the scope of Table 41.1, {system} system")
    seconds = _table_time(rules, system, u0) if u0 is not None else None
    if seconds is None:
        return Missing(fields=("max_disconnection_s",),
                       reason=f"Table 41.1 gives no a.c. time for U0 = {u0_raw} V")
    return Disconnection(seconds=seconds, basis=rules.basis(SECTION, "table_41_1_ac_s"),
                         reason=f"final circuit, {system} system, U0 = {u0:g} V")


def _strictest(view: CircuitView, rules: Ruleset) -> float | None:
    """The shortest time the regulation could require of this circuit, whatever is unrecorded."""
    u0 = view.get("nominal_voltage_v")
    if u0 is None:
        return None
    system = earthing_system(view.raw("earthing"))
    times = [_table_time(rules, s, float(u0)) for s in ((system,) if system else ("TN", "TT"))]
    found = [t for t in times if t is not None]
    return min(found) if found else None


def disconnection_time(view: CircuitView, rules: Ruleset) -> Disconnection | Missing:
    """The time a check judges against: the regulation's, or the record's where it is not longer."""
    regulation = regulation_time(view, rules)
    recorded = view.raw("max_disconnection_s")  # judged above zero by the view
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
