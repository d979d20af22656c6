"""Voltage drop from the origin against IEC 60364-5-52 Table G.52.1 / BS 7671 App. 4 §6.4.

Invariants:
- The drop judged is the circuit's own (``engine.vdrop``, most precise method
  the data supports) plus the drop of every distribution circuit between its
  board and the origin (``engine.feeders``); both parts are in ``inputs``.
- Limit = U0 × (p + allowance) / 100, p = 3 % lighting / 5 % other (public
  supply), 6 % / 8 % (private); allowance 0.005 % per metre of route beyond
  100 m, at most 0.5 %. The route length counts the circuit and the known
  lengths of its feeders. Figures come from the ruleset's ``voltage_drop``.
- Outcomes: within the limit → pass; beyond it → fail, except that a figure
  from the quick method alone (no conductor sizes to split R1+R2) is an upper
  bound only when the cpc is no larger than the neutral, so beyond the limit
  it is ``investigate``. No current or no resistance data → incomplete.
- A broken feeder chain (cycle, missing or conflicting feeder, feeder without
  data) makes this check incomplete for the boards it concerns, with the
  problem's code and message in ``inputs["error"]``.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from ..compiled import basis, derived
from ..context import CircuitView, Context
from ..feeders import FeederProblem, upstream_drop
from ..findings import Finding, found
from ..results import Outcome
from ..ruleset import Ruleset
from ..vdrop import NoDrop, own_drop
from ._compare import incomplete

__all__ = ["limit_pct", "run"]

CHECK = "voltage_drop"
_QUICK_METHODS = frozenset({"r1r2_quick", "ring_r1r2_quick", "three_phase_quick"})


@dataclass(frozen=True, slots=True)
class _Limits:
    table: dict[str, dict[str, float]]
    threshold: float
    per_m: float
    cap: float


def _limits(rules: Ruleset) -> _Limits:
    return _Limits(table=rules.value(CHECK, "limits_pct"),
                   threshold=float(rules.value(CHECK, "long_run_threshold_m")),
                   per_m=float(rules.value(CHECK, "long_run_allowance_pct_per_m")),
                   cap=float(rules.value(CHECK, "long_run_allowance_cap_pct")))


def _words(base: float, load: str, supply: str, allowance: float, route_length_m: float) -> str:
    words = f"{base:g} % {'lighting' if load == 'lighting' else 'other uses'}, {supply} supply"
    if allowance > 0:
        words += f", +{allowance:.3g} % for {route_length_m:g} m of route"
    return words


def limit_pct(view: CircuitView, route_length_m: float) -> tuple[float, float, str]:
    """(base %, long-run allowance %, words) for the circuit's supply and load type."""
    base, allowance, load, supply = _limit_pct(view, route_length_m)
    return base, allowance, _words(base, load, supply, allowance, route_length_m)


def _limit_pct(view: CircuitView, route_length_m: float) -> tuple[float, float, str, str]:
    supply = str(view.get("supply"))
    load = str(view.get("load_type"))
    limits = derived(view.ruleset, _limits)
    base = float(limits.table[supply][load])
    allowance = min(limits.cap, max(0.0, route_length_m - limits.threshold) * limits.per_m)
    return base, allowance, load, supply


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    table = basis(ctx.ruleset, CHECK, "limits_pct")
    own = own_drop(view)
    if isinstance(own, NoDrop):
        yield incomplete(CHECK, own.missing, detail=own.detail, basis=table, inputs=own.inputs)
        return
    upstream = upstream_drop(view.record.board, ctx)
    if view.source("board_fed_from") is not None:
        view.raw("board_fed_from")  # the feeder its board record names: listed in the verdict's inherited
    inputs: dict[str, Any] = {**own.inputs, "circuit_v": own.volts}
    if isinstance(upstream, FeederProblem):
        inputs["error"] = upstream.as_dict()
        message = upstream.message
        yield found(CHECK, Outcome.INCOMPLETE, method=own.method, basis=table, inputs=inputs,
                    detail=lambda: f"the drop from the origin cannot be found: {message}; "
                                   f"this circuit's own drop is {own.volts:.3g} V")
        return
    total = own.volts + upstream.volts
    own_length = view.read.length_m
    route = (float(own_length) if own_length is not None else 0.0) + upstream.length_m
    base, allowance, load, supply = _limit_pct(view, route)
    u0 = float(view.get("nominal_voltage_v"))
    if u0 <= 0:
        yield incomplete(CHECK, ["nominal_voltage_v"], basis=table, inputs=inputs,
                         detail=lambda: f"U0 {u0:g} V is not usable for the limit")
        return
    limit = u0 * (base + allowance) / 100.0
    parts = upstream.parts

    def words() -> str:
        return _words(base, load, supply, allowance, route)

    def all_inputs() -> dict[str, Any]:
        return {**inputs, "upstream_v": upstream.volts, "upstream": [p.feeder for p in parts],
                "upstream_parts": [{"feeder": p.feeder, "volts": p.volts, "method": p.method} for p in parts],
                "u0_v": u0, "limit_pct": base + allowance, "limit_basis": words(), "route_length_m": route}

    def figure() -> str:
        percent = 100.0 * total / u0
        split = (f"{own.volts:.3g} V here + {upstream.volts:.3g} V upstream "
                 f"({', '.join(p.feeder for p in parts)}) = " if parts else "")
        return f"{split}{total:.3g} V ({percent:.2f} % of {u0:g} V) by {own.explanation}"

    if total <= limit:
        outcome = Outcome.PASS
        detail = lambda: f"drop {figure()}, within the {limit:.3g} V limit ({words()})"  # noqa: E731
    elif own.method in _QUICK_METHODS:
        outcome = Outcome.INVESTIGATE
        detail = lambda: (f"quick drop {figure()} exceeds the {limit:.3g} V limit ({words()}); give the "  # noqa: E731
                          "line size and cpc size (or R2) so R1+R2 can be split before deciding")
    else:
        outcome = Outcome.FAIL
        detail = lambda: f"drop {figure()} exceeds the {limit:.3g} V limit ({words()})"  # noqa: E731
    yield found(CHECK, outcome, value=total, limit=limit, limit_kind="max", unit="V", method=own.method,
                basis=table, detail=detail, inputs=all_inputs)
