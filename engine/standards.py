"""Matching a recorded device standard against the standards a ruleset lists.

Invariants:
- A standard matches a listed one when equal to it or followed by a
  separator: ``BS EN 60898-1`` is BS EN 60898, but ``BS 88-2.2`` (a withdrawn
  standard with other limits) is not BS 88-2.
- Fuse standards are those the ruleset has Zs tables for, plus their aliases.
- A leaf module (it imports only the ruleset), so the circuit view can infer a
  device's kind without importing the protection package.
"""

from __future__ import annotations

from typing import Any

from .ruleset import Ruleset

__all__ = ["canonical_fuse_standard", "fuse_standards", "match_standard"]

_SEPARATORS = (" ", "-", ":", "(", "/")


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
