"""How long a device can take to open at a given fault current, bounded from the ruleset's own tables.

Invariants:
- Only what the tables show, as bounds: a device's Zs tables give, for each
  tabulated time t, the current Ia(t) = factor × U0 / Zs(t) at which it opens
  within t. So at a current I ≥ Ia(t) the time is at most t (an upper bound),
  and at I < Ia(t) it is more than t (a lower bound, fuses only: a breaker's
  band lets it open anywhere within it).
- A breaker at or above the top of its instantaneous band opens within the
  ruleset's ``breakers.instantaneous_within_s``.
- A fuse table cell the ruleset marks doubtful gives lower bounds only (its
  value may be too high, so its Ia too low: I below it is below the true one).
- ``upper`` is ``None`` where no table point covers the current.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..compiled import group_memo, remember
from ..readings import format_number
from ..ruleset import Ruleset
from .devices import Device
from .max_zs import fuse_tables

__all__ = ["TimeBounds", "time_bounds"]


@dataclass(frozen=True, slots=True, kw_only=True)
class TimeBounds:
    upper: float | None  # the device opens within this (s), or None: not shown by the tables
    lower: float  # it takes more than this (s); 0 where nothing shows a minimum
    basis: str


# What the tables say of one device, worked out once per ruleset and device (engine.compiled): the
# bounds at a given current are then a pass over a few thresholds (it was a table walk, a list of
# sources and a basis text per circuit, tests/bench).
_Steps = tuple[tuple[tuple[float, float, bool], ...], str]  # ((current ≥ this, seconds, upper too), …), basis


def _breaker_steps(rules: Ruleset, device: Device) -> _Steps:
    multiples: dict[str, dict[str, float]] = rules.value("breakers", "ia_multiple")
    assert device.curve is not None
    steps: list[tuple[float, float, bool]] = []
    top = 0.0
    for seconds, by_curve in multiples.items():
        k = by_curve.get(device.curve)
        if k is None:
            continue
        top = max(top, float(k))
        steps.append((float(k) * device.rating_a, float(seconds), True))
    instant = rules.get("breakers", "instantaneous_within_s")
    if instant is not None and top:
        steps.append((top * device.rating_a, float(instant), True))
    basis = rules.basis("breakers", "ia_multiple")
    if instant is not None:
        basis = f"{basis}; {rules.basis('breakers', 'instantaneous_within_s')}"
    return tuple(steps), basis


def _fuse_steps(rules: Ruleset, device: Device) -> _Steps:
    assert device.standard is not None
    factor = float(rules.value("max_zs", "voltage_factor"))
    steps: list[tuple[float, float, bool]] = []
    sources: list[str] = []
    rating = format_number(device.rating_a)
    for seconds, table, source in fuse_tables(rules, device.standard):
        listed = table["ohm_by_rating_a"].get(rating)
        if listed is None:
            continue
        ia = factor * float(table["u0_v"]) / float(listed)
        doubtful = rating in (table.get("doubtful_ratings_a") or {})
        steps.append((ia, seconds, not doubtful))
        sources.append(source)
    return tuple(steps), "; ".join(sources)


def _steps(rules: Ruleset, device: Device) -> _Steps:
    memo = group_memo(rules)
    key = ("operating_time.steps", device, type(device.rating_a))
    found: _Steps | None = memo.get(key)
    if found is None:
        found = remember(memo, key, _breaker_steps(rules, device) if device.kind == "breaker"
                         else _fuse_steps(rules, device))
    return found


def time_bounds(rules: Ruleset, device: Device, current_a: float) -> TimeBounds:
    """Bounds on the device's opening time at ``current_a`` from the ruleset's tables."""
    steps, basis = _steps(rules, device)
    uppers = [seconds for threshold, seconds, upper in steps if upper and current_a >= threshold]
    if device.kind == "breaker":  # a breaker's band lets it open anywhere within it: no lower bound
        return TimeBounds(upper=min(uppers) if uppers else None, lower=0.0, basis=basis)
    lowers = [0.0, *(seconds for threshold, seconds, _ in steps if current_a < threshold)]
    return TimeBounds(upper=min(uppers) if uppers else None, lower=max(lowers), basis=basis)
