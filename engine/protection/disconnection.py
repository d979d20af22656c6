"""The maximum disconnection time a circuit must meet (Chapter 41).

Invariants:
- ``max_disconnection_s`` on the record overrides everything (the designer's figure).
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

from dataclasses import dataclass
from typing import Any

from ..context import CircuitView
from ..ruleset import Ruleset
from .common import Missing, positive

__all__ = ["Disconnection", "disconnection_time", "earthing_system"]

SECTION = "disconnection"


@dataclass(frozen=True, slots=True, kw_only=True)
class Disconnection:
    seconds: float
    basis: str
    reason: str


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
    sockets = view.raw("socket_outlets")
    if sockets is None and view.get("circuit_form") == "ring":
        sockets = True  # a ring final circuit has socket-outlets
    if sockets is None:
        return Missing(fields=("socket_outlets",),
                       reason=f"between {min(socket_max, fixed_max):g} A and "
                              f"{max(socket_max, fixed_max):g} A the time depends on socket-outlets")
    return rating <= (socket_max if sockets else fixed_max)


def disconnection_time(view: CircuitView, rules: Ruleset) -> Disconnection | Missing:
    override = positive(view.raw("max_disconnection_s"))
    if override is not None:
        return Disconnection(seconds=override, basis="record: max_disconnection_s",
                             reason="given on the record")
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
    u0 = view.get("nominal_voltage_v")
    seconds = _table_time(rules, system, float(u0)) if u0 is not None else None
    if seconds is None:
        return Missing(fields=("max_disconnection_s",),
                       reason=f"Table 41.1 gives no a.c. time for U0 = {u0} V")
    return Disconnection(seconds=seconds, basis=rules.basis(SECTION, "table_41_1_ac_s"),
                         reason=f"final circuit, {system} system, U0 = {float(u0):g} V")
