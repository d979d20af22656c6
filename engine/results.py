"""Outcomes, check results and verdicts: what the engine hands back.

Invariants:
- A circuit's outcome is its worst check: fail > investigate > incomplete > pass.
  A circuit with no applicable check is ``incomplete`` (nothing was shown to pass).
- ``margin`` = (limit − value) / limit for an upper limit and
  (value − limit) / limit for a lower one: positive inside the limit.
- Results are frozen; ``inputs`` is a plain dict the caller must not mutate.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any, Literal

__all__ = ["CHECK_IDS", "CheckResult", "LimitKind", "Outcome", "Verdict", "worst"]

CHECK_IDS: tuple[str, ...] = (
    "continuity",
    "ring_continuity",
    "insulation",
    "polarity",
    "loop_impedance",
    "external_impedance",
    "loop_consistency",
    "fault_current",
    "rcd_time",
    "earth_electrode",
    "voltage_drop",
)

_KNOWN_CHECKS: frozenset[str] = frozenset(CHECK_IDS)  # one hash per result, not a scan of the tuple

LimitKind = Literal["max", "min"]


class Outcome(StrEnum):
    PASS = "pass"
    INCOMPLETE = "incomplete"
    INVESTIGATE = "investigate"
    FAIL = "fail"

    @property
    def severity(self) -> int:
        return _SEVERITY[self]


_SEVERITY = {Outcome.PASS: 0, Outcome.INCOMPLETE: 1, Outcome.INVESTIGATE: 2, Outcome.FAIL: 3}


def worst(outcomes: Iterable[Outcome], *, empty: Outcome = Outcome.INCOMPLETE) -> Outcome:
    found = list(outcomes)
    return max(found, key=_SEVERITY.__getitem__) if found else empty


@dataclass(frozen=True, slots=True, kw_only=True)
class CheckResult:
    check: str
    outcome: Outcome
    detail: str
    value: float | None = None
    relation: str = "="
    limit: float | None = None
    limit_kind: LimitKind | None = None
    unit: str | None = None
    method: str | None = None
    basis: str | None = None
    inputs: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        try:
            known = self.check in _KNOWN_CHECKS
        except TypeError:  # unhashable, so certainly no check id: the same ValueError as before
            known = False
        if not known:
            raise ValueError(f"unknown check id {self.check!r}")

    @property
    def margin(self) -> float | None:
        if self.value is None or self.limit is None or self.limit == 0 or self.limit_kind is None:
            return None
        if self.limit_kind == "max":
            return (self.limit - self.value) / self.limit
        return (self.value - self.limit) / self.limit

    def as_dict(self) -> dict[str, Any]:
        margin = self.margin
        out: dict[str, Any] = {
            "check": self.check,
            "outcome": self.outcome.value,
            "value": _round(self.value),
            "relation": self.relation,
            "limit": _round(self.limit),
            "limit_kind": self.limit_kind,
            "unit": self.unit,
            "margin": None if margin is None else round(margin, 4),
            "method": self.method,
            "basis": self.basis,
            "inputs": {k: _round(v) if isinstance(v, float) else v for k, v in self.inputs.items()},
            "detail": self.detail,
        }
        return out


def _round(value: float | None) -> float | None:
    """Six significant figures: far below any meter's resolution, free of float noise."""
    if value is None or not math.isfinite(value):  # JSON has no infinity; None reads "no figure"
        return None
    if abs(value) < 1e-9:  # a difference of two equal readings, not a measurement
        return 0.0
    return float(f"{value:.6g}")


@dataclass(frozen=True, slots=True, kw_only=True)
class Verdict:
    board: str
    circuit: str
    outcome: Outcome
    checks: tuple[CheckResult, ...]
    defaults_applied: Mapping[str, Any] = field(default_factory=dict)
    errors: tuple[Mapping[str, str], ...] = ()

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.circuit)

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "board": self.board,
            "circuit": self.circuit,
            "outcome": self.outcome.value,
            "checks": [c.as_dict() for c in self.checks],
            "defaults_applied": dict(self.defaults_applied),
        }
        if self.errors:
            out["errors"] = [dict(e) for e in self.errors]
        return out
