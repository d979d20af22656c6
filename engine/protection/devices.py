"""Which protective device a record describes, in the terms the Zs tables need.

Invariants:
- ``device_kind`` wins; where it is absent the kind is inferred from
  ``device_standard`` only when the ruleset lists that standard (a breaker
  standard, or a fuse standard with a table). Nothing else is guessed.
- A standard matches a listed one when equal to it or followed by a
  separator: ``BS EN 60898-1`` is BS EN 60898, but ``BS 88-2.2`` (a withdrawn
  standard with other limits) is not BS 88-2.
- A rating or curve that is absent, zero or not finite is reported as missing.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..ruleset import Ruleset
from .common import Missing, positive

__all__ = ["Device", "fuse_standards", "match_standard", "resolve_device"]

_SEPARATORS = (" ", "-", ":", "(", "/")


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


def match_standard(text: str | None, listed: list[str] | tuple[str, ...]) -> str | None:
    """The listed standard ``text`` names, if any (see the module's invariants)."""
    if not text:
        return None
    folded = text.strip().upper()
    for standard in listed:
        name = standard.upper()
        if folded == name or (folded.startswith(name) and folded[len(name)] in _SEPARATORS):
            return standard
    return None


def fuse_standards(rules: Ruleset) -> tuple[str, ...]:
    """Fuse standards the ruleset has tables for, plus their aliases."""
    section = rules.sections.get("fuses", {})
    names = {e.value["standard"] for e in section.values()
             if isinstance(e.value, dict) and "ohm_by_rating_a" in e.value}
    aliases: dict[str, Any] = rules.get("fuses", "standard_aliases", {}) or {}
    return tuple(sorted(names | set(aliases)))


def canonical_fuse_standard(rules: Ruleset, standard: str) -> str:
    aliases: dict[str, str] = rules.get("fuses", "standard_aliases", {}) or {}
    return aliases.get(standard, standard)


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
