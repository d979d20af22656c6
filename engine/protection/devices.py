"""Which protective device a record describes, in the terms the Zs tables need.

Invariants:
- ``kind`` is what the circuit view gives (the record's ``device_kind``, or the
  kind it inferred and reported); where it is still absent the kind is taken
  from ``device_standard`` only when the ruleset lists that standard.
- Standards are matched by :mod:`engine.standards` (re-exported here).
- A rating or curve that is absent, zero or not finite is reported as missing.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..ruleset import Ruleset
from ..standards import canonical_fuse_standard, fuse_standards, match_standard
from .common import Missing, positive

__all__ = ["Device", "fuse_standards", "match_standard", "resolve_device"]

@dataclass(frozen=True, slots=True, kw_only=True)
class Device:
    kind: str  # "breaker" (breakers and RCBOs) or "fuse"
    standard: str | None
    curve: str | None
    rating_a: float

    def label(self) -> str:
        rating = f"{self.rating_a:g}"
        if self.kind == "breaker":
            return f"{self.curve}{rating} ({self.standard or 'breaker/RCBO'})"
        return f"{self.standard} {rating} A fuse"


def resolve_device(rules: Ruleset, *, kind: str | None, standard: str | None,
                   curve: str | None, rating_a: float | None) -> Device | Missing:
    breaker_standards: list[str] = rules.get("breakers", "standards", []) or []
    breaker_std = match_standard(standard, breaker_standards)
    fuse_std = match_standard(standard, fuse_standards(rules))
    if kind is None:
        kind = "breaker" if breaker_std else "fuse" if fuse_std else None
    if kind is None:
        return Missing(fields=("device_kind", "device_standard"),
                       reason="the protective device is not described")
    if kind not in ("breaker", "rcbo", "fuse"):
        return Missing(fields=("device_max_zs_ohm",),
                       reason=f"no table covers a device of kind {kind!r}")
    rating = positive(rating_a)
    if kind in ("breaker", "rcbo"):
        if standard and breaker_std is None:
            return Missing(fields=("device_max_zs_ohm",),
                           reason=f"no table covers breakers to {standard}")
        needed = [name for name, value in (("device_curve", curve), ("device_rating_a", rating))
                  if value is None]
        if needed:
            return Missing(fields=tuple(needed), reason="the breaker's curve and rating set Ia")
        assert rating is not None
        return Device(kind="breaker", standard=breaker_std, curve=curve, rating_a=rating)
    if standard is None:
        return Missing(fields=("device_standard",) + (() if rating else ("device_rating_a",)),
                       reason="fuse tables are per standard")
    if fuse_std is None:
        return Missing(fields=("device_max_zs_ohm",),
                       reason=f"the ruleset has no Zs table for fuses to {standard}")
    if rating is None:
        return Missing(fields=("device_rating_a",), reason="fuse tables are per rating")
    return Device(kind="fuse", standard=canonical_fuse_standard(rules, fuse_std), curve=None,
                  rating_a=rating)
