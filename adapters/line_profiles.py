"""Regex line profiles: a logger's own line layout → fields, through named groups.

A profile file (``kind: "regex"``) gives a ``pattern`` whose named groups are
field names, or are mapped to fields (with a unit and scale) under ``groups``::

    {"name": "example-logger", "kind": "regex",
     "pattern": "^(?P<board>\\\\w+)/(?P<circuit>\\\\w+) LOOP (?P<zs>[\\\\d.]+)",
     "groups": {"zs": {"field": "zs_ohm", "unit": "mΩ"}}}

Invariants:
- The pattern is compiled once per read, with the group → parser plan beside it.
- A line that does not match is an error for that line only (``no_match``).
- Groups that did not take part in the match are absent fields, not errors.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from .cells import CellParser
from .profiles import RegexProfile

__all__ = ["CompiledLineProfile", "compile_line_profile"]


@dataclass(frozen=True, slots=True)
class CompiledLineProfile:
    name: str
    pattern: re.Pattern[str]
    plan: tuple[tuple[str, str, CellParser], ...]  # (group, field, parser) for reading fields
    key_groups: tuple[tuple[str, str], ...]  # (group, "board"/"circuit")


def compile_line_profile(profile: RegexProfile, *, decimal_comma: bool) -> CompiledLineProfile:
    """The profile's pattern and a cached parser per group."""
    pattern = re.compile(profile.pattern)
    specs = {g.source: g for g in profile.groups}
    plan: list[tuple[str, str, CellParser]] = []
    keys: list[tuple[str, str]] = []
    for group in pattern.groupindex:
        spec = specs.get(group)
        name = spec.field if spec else group
        if name in ("board", "circuit"):
            keys.append((group, name))
            continue
        plan.append((group, name, CellParser(name, unit=spec.unit if spec else None,
                                             decimal_comma=decimal_comma,
                                             scale=spec.scale if spec else 1.0)))
    return CompiledLineProfile(profile.name, pattern, tuple(plan), tuple(keys))
