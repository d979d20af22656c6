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


def _breaker(rules: Ruleset, device: Device, current_a: float) -> TimeBounds:
    multiples: dict[str, dict[str, float]] = rules.value("breakers", "ia_multiple")
    assert device.curve is not None
    uppers: list[float] = []
    top = 0.0
    for seconds, by_curve in multiples.items():
        k = by_curve.get(device.curve)
        if k is None:
            continue
        top = max(top, float(k))
        if current_a >= float(k) * device.rating_a:
            uppers.append(float(seconds))
    instant = rules.get("breakers", "instantaneous_within_s")
    if instant is not None and top and current_a >= top * device.rating_a:
        uppers.append(float(instant))
    basis = rules.basis("breakers", "ia_multiple")
    if instant is not None:
        basis = f"{basis}; {rules.basis('breakers', 'instantaneous_within_s')}"
    return TimeBounds(upper=min(uppers) if uppers else None, lower=0.0, basis=basis)


def _fuse(rules: Ruleset, device: Device, current_a: float) -> TimeBounds:
    assert device.standard is not None
    factor = float(rules.value("max_zs", "voltage_factor"))
    uppers: list[float] = []
    lowers: list[float] = [0.0]
    sources: list[str] = []
    rating = format_number(device.rating_a)
    for seconds, table, source in fuse_tables(rules, device.standard):
        listed = table["ohm_by_rating_a"].get(rating)
        if listed is None:
            continue
        ia = factor * float(table["u0_v"]) / float(listed)
        doubtful = rating in (table.get("doubtful_ratings_a") or {})
        if current_a >= ia and not doubtful:
            uppers.append(seconds)
        elif current_a < ia:
            lowers.append(seconds)
        sources.append(source)
    return TimeBounds(upper=min(uppers) if uppers else None, lower=max(lowers), basis="; ".join(sources))


def time_bounds(rules: Ruleset, device: Device, current_a: float) -> TimeBounds:
    """Bounds on the device's opening time at ``current_a`` from the ruleset's tables."""
    if device.kind == "breaker":
        return _breaker(rules, device, current_a)
    return _fuse(rules, device, current_a)
