"""RCD operating times against the product standard (BS EN / IEC 61008-1, 61009-1 Table 1).

Invariants:
- Applies where an RCD is shown: ``rcd_residual_ma`` recorded, an RCBO (recorded
  or inferred), or any RCD test result recorded (a trip time, the ½ IΔn test):
  a recorded trip time means an RCD is there, and the check is never skipped.
- Without IΔn the test current is not shown: a time beyond the limit still
  fails (it fails at any IΔn), but a time within it is ``incomplete`` naming
  ``rcd_residual_ma``, never a pass.
- At IΔn (``rcd_trip_ms``): general type ≤ 300 ms; type S (``rcd_delayed``)
  130–500 ms. Missing → incomplete: BS 7671:2018+A2:2022 643.8 requires this test.
- At 5 IΔn (``rcd_trip_5x_ms``), when given: general ≤ 40 ms, type S 50–150 ms.
  Its absence is incomplete only where the ruleset says the test is required
  (``require_5idn_test``; false under A2:2022, which dropped it).
- ``rcd_half_no_trip`` false (tripped at ½ IΔn) → fail; true → pass; absent → left out.
- An RCD not recorded as delayed is judged as a general type (the ruleset's
  ``delayed_when_unrecorded``), reported in ``defaults_applied``: its 300 ms
  maximum is the stricter upper limit, so the assumption cannot hide a slow device.
- Bounded readings: ``> 300 ms`` or ``OL`` (did not trip) fail a 300 ms maximum.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from types import MappingProxyType

from ..compiled import basis, remember
from ..context import CircuitView, Context
from ..findings import Basis, Finding, found, inputs_of, render
from ..readings import Reading
from ..results import LimitKind, Outcome
from ..ruleset import Ruleset
from ._compare import Side, compare_max, compare_min, incomplete
from ._rcd import rcd_evidence

__all__ = ["run"]

CHECK = "rcd_time"
SECTION = "rcd"


def _is_delayed(view: CircuitView, rules: Ruleset) -> bool:
    recorded = view.read.rcd_delayed
    if recorded is not None:
        return bool(recorded)
    assumed = bool(rules.value(SECTION, "delayed_when_unrecorded"))
    view.defaults_applied["rcd_delayed"] = assumed  # reported like any other default
    return assumed


def _without_idn(result: Finding, evidence: str) -> Finding:
    """No IΔn: a time within the limit does not show the RCD works at its rated current."""
    if result.outcome is not Outcome.PASS:
        return result
    said = result.detail
    return result._replace(
        outcome=Outcome.INCOMPLETE,
        inputs=lambda: {**inputs_of(result), "missing": ["rcd_residual_ma"], "rcd_inferred_from": evidence},
        detail=lambda: f"{render(said)}, but the RCD's IΔn is not recorded, so the test current is not shown")


def run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    evidence = rcd_evidence(view)
    if evidence is None:
        return
    results = list(_run(view, ctx))
    if view.read.rcd_residual_ma is None:
        results = [_without_idn(r, evidence) for r in results]
    yield from results


_TESTS = (("IΔn", "rcd_trip_ms", "at_idn"), ("5 IΔn", "rcd_trip_5x_ms", "at_5idn"))


def _run(view: CircuitView, ctx: Context) -> Iterator[Finding]:
    rules = ctx.ruleset
    delayed = _is_delayed(view, rules)
    kind = "S" if delayed else "general"
    for multiple, field, suffix in _TESTS:
        low_key = f"delayed_min_ms_{suffix}" if delayed else None
        high_key = f"{'delayed' if delayed else 'general'}_max_ms_{suffix}"
        reading = view.raw(field)
        if reading is None:
            if suffix == "at_idn" or rules.get(SECTION, "require_5idn_test", False):
                yield incomplete(CHECK, [field], basis=basis(rules, SECTION, high_key),
                                 inputs={"test": multiple, "rcd_kind": kind})
            continue
        yield _window(ctx, reading, multiple, kind, low_key, high_key, f"trip_time_{suffix}")
    half = view.read.rcd_half_no_trip
    if half is not None:
        yield found(CHECK, Outcome.PASS if half else Outcome.FAIL, method="half_idn_no_trip",
                    basis=basis(rules, SECTION, "half_idn_must_not_trip"), inputs=_HALF,
                    detail="did not trip at ½ IΔn, as required" if half
                    else "tripped at ½ IΔn: the device must not operate at half its rated residual current")


_HALF = MappingProxyType({"test": "½ IΔn"})  # shared by every such result, so read-only


@dataclass(frozen=True, slots=True)
class _Window:
    high: float
    low: float | None
    high_basis: Basis
    low_basis: Basis | None


# The limits of a window depend on the ruleset alone: looked up once per ruleset and kept in
# its group memo, not four ruleset lookups per reading (tests/bench). A missing value still
# raises here, at the same point, so the error and the results before it are as before.
_LIMITS_KEY = "rcd_time.limits"


def _limits(ctx: Context, low_key: str | None, high_key: str) -> _Window:
    key = (_LIMITS_KEY, low_key, high_key)
    try:
        cached: _Window = ctx.memo[key]
    except KeyError:
        rules = ctx.ruleset
        high = float(rules.value(SECTION, high_key))
        low = float(rules.value(SECTION, low_key)) if low_key else None
        cached = remember(ctx.memo, key, _Window(high, low, basis(rules, SECTION, high_key),
                                                 basis(rules, SECTION, low_key) if low_key else None))
    return cached


def _window(ctx: Context, reading: Reading, multiple: str, kind: str, low_key: str | None,
            high_key: str, method: str) -> Finding:
    window = _limits(ctx, low_key, high_key)
    high, low = window.high, window.low
    limit, rule = high, window.high_basis
    limit_kind: LimitKind = "max"
    side_high = compare_max(reading, high)
    side_low = compare_min(reading, low) if low is not None else Side.WITHIN
    if side_high is Side.BEYOND:
        outcome, text = Outcome.FAIL, "{shown} at {multiple} is above the {high:g} ms maximum"
    elif side_low is Side.BEYOND:
        assert low is not None and window.low_basis is not None
        limit, limit_kind, rule = low, "min", window.low_basis
        outcome, text = Outcome.FAIL, ("{shown} at {multiple} is below the {low:g} ms a type S device must "
                                       "not trip within (loss of discrimination)")
    elif side_high is Side.UNKNOWN or side_low is Side.UNKNOWN:
        outcome, text = Outcome.INVESTIGATE, "the bounded reading {shown} at {multiple} settles nothing"
    else:
        outcome, text = Outcome.PASS, "{shown} at {multiple} is within {window}"
    return found(CHECK, outcome, value=reading.value, relation=reading.relation, limit=limit,
                 limit_kind=limit_kind, unit="ms", method=method, basis=rule,
                 inputs=lambda: {"test": multiple, "rcd_kind": kind, "max_ms": high, "min_ms": low},
                 detail=lambda: f"{kind} RCD: " + text.format(
                     shown=reading.display("ms"), multiple=multiple, high=high, low=low,
                     window=f"{low:g}–{high:g} ms" if low is not None else f"≤ {high:g} ms"))
