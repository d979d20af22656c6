"""The check registry: check id → function, in the order verdicts list them.

A check is a pure function ``(view, context) -> iterable of Finding``
(:mod:`engine.findings`: numbers first, the sentence left to be rendered). It
yields nothing when it does not apply to the circuit (no RCD, not a ring), an
``incomplete`` result when it applies but data is missing, and otherwise one
result per thing it judged (a ring check may judge three things).

To add a check family: write ``engine/checks/<family>.py`` with a ``run``
function and add it here; the check id must be one of
:data:`engine.results.CHECK_IDS`. Its figures come from the ruleset through
:mod:`engine.compiled` (once per ruleset, not per circuit), and its sentences
are renderers over values already computed (see :mod:`engine.findings`).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable

from ..context import CircuitView, Context
from ..findings import Finding
from . import (
    additional_protection,
    continuity,
    earth_electrode,
    external_impedance,
    fault_current,
    insulation,
    loop_consistency,
    loop_impedance,
    overload,
    polarity,
    previous_visit,
    protective_conductor,
    rcd_time,
    ring_continuity,
    voltage_drop,
)

__all__ = ["CHECKS", "CheckFn"]

CheckFn = Callable[[CircuitView, Context], Iterable[Finding]]

CHECKS: dict[str, CheckFn] = {
    "continuity": continuity.run,
    "ring_continuity": ring_continuity.run,
    "insulation": insulation.run,
    "polarity": polarity.run,
    "loop_impedance": loop_impedance.run,
    "external_impedance": external_impedance.run,
    "loop_consistency": loop_consistency.run,
    "fault_current": fault_current.run,
    "rcd_time": rcd_time.run,
    "earth_electrode": earth_electrode.run,
    "voltage_drop": voltage_drop.run,
    "additional_protection": additional_protection.run,
    "overload": overload.run,
    "protective_conductor": protective_conductor.run,
    "previous_visit": previous_visit.run,
}
