"""Regex line profiles: a logger's own line layout → fields, through named groups.

A profile file (``kind: "regex"``) gives a ``pattern`` whose named groups are
field names, or are mapped to fields (with a unit and scale) under ``groups``::

    {"name": "example-logger", "kind": "regex",
     "pattern": "^(?P<board>\\\\w+)/(?P<circuit>\\\\w+) LOOP (?P<zs>[\\\\d.]+)",
     "groups": {"zs": {"field": "zs_ohm", "unit": "mΩ"}}}

Invariants:
- The pattern is compiled once per read, by RE2 (:mod:`adapters.profile_regex`),
  so matching a line takes time linear in its length whatever the operator wrote.
- A line that does not match is an error for that line only (``no_match``).
- Groups that did not take part in the match are absent fields, not errors.
"""

from __future__ import annotations

from dataclasses import dataclass

from .profile_regex import ProfilePattern, compile_pattern
from .profiles import RegexProfile

__all__ = ["CompiledLineProfile", "GroupPlan", "compile_line_profile"]


@dataclass(frozen=True, slots=True)
class GroupPlan:
    group: str
    field: str
    unit: str | None
    scale: float


@dataclass(frozen=True, slots=True)
class CompiledLineProfile:
    name: str
    pattern: ProfilePattern
    plan: tuple[GroupPlan, ...]  # reading and design fields
    key_groups: tuple[tuple[str, str], ...]  # (group, "board"/"circuit")


def compile_line_profile(profile: RegexProfile) -> CompiledLineProfile:
    """The profile's pattern (already validated when the profile was loaded) and its group plan."""
    pattern = compile_pattern(profile.pattern)
    specs = {g.source: g for g in profile.groups}
    plan: list[GroupPlan] = []
    keys: list[tuple[str, str]] = []
    for group in pattern.groupindex:
        spec = specs.get(group)
        name = spec.field if spec else group
        if name in ("board", "circuit"):
            keys.append((group, name))
            continue
        plan.append(GroupPlan(group, name, spec.unit if spec else None, spec.scale if spec else 1.0))
    return CompiledLineProfile(profile.name, pattern, tuple(plan), tuple(keys))
