"""Operators' regex line profiles, compiled with RE2: matching time is linear, whatever the pattern.

A line profile's pattern comes from an operator's file, and a backtracking
pattern such as ``(\\w+\\s?)+$`` takes Python's ``re`` exponential time on a
line that almost matches: one such line would hold a worker until it is
killed. RE2 (the ``google-re2`` bindings) matches in time linear in the line's
length for every pattern it accepts, so the guarantee holds by construction,
with no timer to tune and no thread to interrupt.

Invariants:
- Every profile pattern is compiled here and nowhere else; a pattern RE2 does
  not accept (back-references, look-around, possessive quantifiers) is a
  ``bad_profile`` error at load time, with RE2's reason, never a fallback to
  ``re``.
- RE2's own error log is off: a refused pattern is reported once, by us.
- Differences from ``re`` that a profile author meets: ``\\d``, ``\\w``, ``\\s``
  are ASCII classes; ``\\Z`` is written ``\\z``. Named groups are ``(?P<name>…)``.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Protocol

import re2  # type: ignore[import-untyped]  # google-re2 ships no type information

__all__ = ["PatternError", "ProfileMatch", "ProfilePattern", "compile_pattern"]


class PatternError(ValueError):
    """RE2 does not accept the pattern; the message says why."""


class ProfileMatch(Protocol):
    def group(self, name: str) -> str | None: ...


class ProfilePattern(Protocol):
    @property
    def groupindex(self) -> Mapping[str, int]: ...

    def search(self, text: str) -> ProfileMatch | None: ...


def _options() -> Any:
    options = re2.Options()
    options.log_errors = False
    return options


def compile_pattern(pattern: str) -> ProfilePattern:
    """The pattern compiled by RE2, or :class:`PatternError` with RE2's reason."""
    try:
        compiled: ProfilePattern = re2.compile(pattern, _options())
    except re2.error as exc:
        reason = exc.args[0] if exc.args else exc
        text = reason.decode("utf-8", "replace") if isinstance(reason, bytes) else str(reason)
        raise PatternError(f"RE2 does not accept it: {text} (back-references and look-around are "
                           "not available: every pattern must match in linear time)") from exc
    return compiled
