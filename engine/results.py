"""Outcomes, check results and verdicts: what the engine hands back.

Invariants:
- A circuit's outcome is its worst check: fail > investigate > incomplete > pass.
  A circuit with no applicable check is ``incomplete`` (nothing was shown to pass).
- ``margin`` = (limit − value) / limit for an upper limit and
  (value − limit) / limit for a lower one: positive inside the limit.
- Results are immutable (frozen, slotted, keyword-only dataclasses); ``inputs``
  is a plain dict the caller must not mutate (read-only and shared when a check
  gives none).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, fields
from enum import StrEnum
from types import MappingProxyType
from typing import Any, Literal

from .compact import CompactRow, CompactVerdict

__all__ = ["CHECK_IDS", "NO_INPUTS", "OUTCOME_MEANINGS", "OUTCOME_TEXT", "CheckResult", "LimitKind",
           "Outcome", "Verdict", "round_figure", "worst"]

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
    "additional_protection",
    "overload",
    "protective_conductor",
    "previous_visit",
)

_KNOWN_CHECKS: frozenset[str] = frozenset(CHECK_IDS)  # one hash per result, not a scan of the tuple

LimitKind = Literal["max", "min"]
NO_INPUTS: Mapping[str, Any] = MappingProxyType({})  # the shared, read-only "no inputs"


class Outcome(StrEnum):
    PASS = "pass"
    INCOMPLETE = "incomplete"
    INVESTIGATE = "investigate"
    FAIL = "fail"

    @property
    def severity(self) -> int:
        return _SEVERITY[self]


#: What each outcome tells the person who signs (engine/README.md prints this table).
OUTCOME_MEANINGS: dict[Outcome, str] = {
    Outcome.FAIL: "the readings show the limit is not met",
    Outcome.INVESTIGATE: "within the limits as far as they go, but a reading looks wrong, implausible "
                         "or marginal, or a bound settles nothing: a person must look",
    Outcome.INCOMPLETE: "the check applies but a value it needs is missing or was rejected: "
                        "nothing was shown either way",
    Outcome.PASS: "the readings show the limit met",
}

_SEVERITY = {Outcome.PASS: 0, Outcome.INCOMPLETE: 1, Outcome.INVESTIGATE: 2, Outcome.FAIL: 3}
#: Each outcome's text, for the hot paths (an enum's ``.value`` is a descriptor call).
OUTCOME_TEXT: dict[Outcome, str] = {outcome: outcome.value for outcome in Outcome}


def worst(outcomes: Iterable[Outcome], *, empty: Outcome = Outcome.INCOMPLETE) -> Outcome:
    found = list(outcomes)
    return max(found, key=_SEVERITY.__getitem__) if found else empty


def _no_inputs() -> Mapping[str, Any]:
    return NO_INPUTS


@dataclass(frozen=True, slots=True, kw_only=True)
class CheckResult:
    """One judged thing: a frozen, slotted, keyword-only dataclass with a known check id.

    It compares equal only to another ``CheckResult`` (never to a tuple). Measured
    against the keyword-only tuple it replaced: 1.2 µs to build one against 0.4 µs
    (a frozen dataclass sets each field through ``object.__setattr__``), and
    ``verify()`` at 0.91× the tuple's rate at 48 and at 2,000 circuits (synthetic
    set of tests/bench, best of three runs each, same session). Kept: a result
    type that is what it says it is is worth those 9 %.
    """

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
    basis_id: str | None = None
    """The ruleset entry ``basis`` begins with (``section.key``) or ``record:<field>``: the compact view's."""
    inputs: Mapping[str, Any] = field(default_factory=_no_inputs)

    def __post_init__(self) -> None:
        try:
            known = self.check in _KNOWN_CHECKS
        except TypeError:  # unhashable, so certainly no check id
            known = False
        if not known:
            raise ValueError(f"unknown check id {self.check!r}")

    def __reduce__(self) -> tuple[Any, tuple[dict[str, Any]]]:
        # pickle and copy by keyword; the shared read-only "no inputs" travels as a plain dict
        values = {name: getattr(self, name) for name in _RESULT_FIELDS}
        values["inputs"] = dict(self.inputs)
        return _rebuild, (values,)

    @property
    def margin(self) -> float | None:
        if self.value is None or self.limit is None or self.limit == 0 or self.limit_kind is None:
            return None
        if self.limit_kind == "max":
            return (self.limit - self.value) / self.limit
        return (self.value - self.limit) / self.limit

    def compact_row(self) -> CompactRow:
        """``[check, outcome, value, relation, limit, unit, basis_id]`` (:mod:`engine.compact`)."""
        value, limit = self.value, self.limit
        return (self.check, OUTCOME_TEXT[self.outcome], None if value is None else round_figure(value),
                self.relation, None if limit is None else round_figure(limit), self.unit, self.basis_id)

    def as_dict(self) -> dict[str, Any]:
        """The full view of this result: every key, in a fixed order (``null`` where there is none).

        Clients read ``check["limit"]`` without asking whether the key is there: the keys of the
        contract are always present; the compact view (:meth:`compact_row`) is the small one.
        """
        # The hot path of every verdict body (tests/bench): the margin is inlined here, with
        # the same result as :attr:`margin`.
        value, limit, kind = self.value, self.limit, self.limit_kind
        margin = None
        if value is not None and limit is not None and limit != 0 and kind is not None:
            margin = round(((limit - value) if kind == "max" else (value - limit)) / limit, 4)
        out: dict[str, Any] = {
            "check": self.check, "outcome": OUTCOME_TEXT[self.outcome],
            "value": None if value is None else round_figure(value), "relation": self.relation,
            "limit": None if limit is None else round_figure(limit), "limit_kind": kind, "unit": self.unit,
            "margin": margin, "method": self.method, "basis": self.basis}
        inputs = self.inputs
        out["inputs"] = {k: round_figure(v) if type(v) is float else v for k, v in inputs.items()} \
            if inputs else {}
        out["detail"] = self.detail
        return out


_RESULT_FIELDS: tuple[str, ...] = tuple(f.name for f in fields(CheckResult))


def _rebuild(kwargs: dict[str, Any]) -> CheckResult:
    return CheckResult(**kwargs)


def round_figure(value: float | None) -> float | None:
    """Six significant figures: far below any meter's resolution, free of float noise."""
    try:
        return _ROUNDED[value]  # type: ignore[index]
    except KeyError:
        pass
    if value is None or value - value != 0.0:  # nan or ±inf: JSON has neither; None reads "no figure"
        return None
    if -1e-9 < value < 1e-9:  # a difference of two equal readings, not a measurement
        return 0.0
    if len(_ROUNDED) >= _ROUNDED_MAX:
        _ROUNDED.clear()
    rounded = _ROUNDED[value] = float(f"{value:.6g}")
    return rounded


# Figures already rounded: limits, factors and readings repeat across a job's circuits, and a result
# rounds two to ten figures. A pure memo of the line above, bounded small (stream RSS); a dict
# look-up first, because the rounding is called ~30 times a circuit (tests/bench).
_ROUNDED: dict[float, float] = {}
_ROUNDED_MAX = 8192


@dataclass(frozen=True, slots=True, kw_only=True)
class Verdict:
    board: str
    circuit: str
    outcome: Outcome
    checks: tuple[CheckResult, ...]
    description: str | None = None
    defaults_applied: Mapping[str, Any] = field(default_factory=dict)
    inferred: Mapping[str, Any] = field(default_factory=dict)
    inherited: Mapping[str, str] = field(default_factory=dict)
    """Field → where the value a check read came from: ``"board DB2"`` or ``"installation"``."""
    errors: tuple[Mapping[str, str], ...] = ()

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.circuit)

    def compact(self) -> CompactVerdict:
        """The compact view of this verdict (:mod:`engine.compact`): the same outcomes, values and limits."""
        return {"board": self.board, "circuit": self.circuit, "outcome": OUTCOME_TEXT[self.outcome],
                "checks": [c.compact_row() for c in self.checks]}

    def as_dict(self) -> dict[str, Any]:
        """The full view: every key always (``description`` ``null`` when unrecorded), ``errors`` when any."""
        out: dict[str, Any] = {
            "board": self.board,
            "circuit": self.circuit,
            "description": self.description,
            "outcome": OUTCOME_TEXT[self.outcome],
            "checks": [c.as_dict() for c in self.checks],
            "defaults_applied": dict(self.defaults_applied),
            "inferred": dict(self.inferred),
            "inherited": dict(self.inherited),
        }
        if self.errors:
            out["errors"] = [dict(e) for e in self.errors]
        return out
