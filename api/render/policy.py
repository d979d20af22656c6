"""How a pipeline treats each outcome: fail the build, warn, or let it pass.

Invariants:
- ``pass`` is always treated as pass; ``fail`` is always treated as fail (a
  policy can widen what fails, never hide a failed check).
- Thresholds follow the engine's severity order, fail > investigate >
  incomplete > pass: ``fail_on=investigate`` fails on investigate *and* fail.
- Fail wins over warn: an outcome at or above ``fail_on`` is never a warning.
- A circuit is failing exactly when its outcome (its worst check) is treated
  as fail, so the exit status and the per-check reports always agree.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

from engine import Outcome

__all__ = [
    "DEFAULT_POLICY",
    "FAIL_ON_CHOICES",
    "WARN_ON_CHOICES",
    "Policy",
    "PolicyError",
    "Treatment",
    "policy_from_names",
]

# The spellings of --fail-on and --warn-on (and of ?fail_on= / ?warn_on= in the API).
FAIL_ON_CHOICES: tuple[str, ...] = ("fail", "investigate", "incomplete")
WARN_ON_CHOICES: tuple[str, ...] = ("investigate", "incomplete", "none")


class Treatment(StrEnum):
    FAIL = "fail"
    WARN = "warn"
    PASS = "pass"


class PolicyError(ValueError):
    """A policy spelled wrongly; ``code`` is stable for the API's problem body."""

    code = "bad_policy"


@dataclass(frozen=True, slots=True, kw_only=True)
class Policy:
    """``fail_on``: the least severe outcome that fails; ``warn_on``: that warns (None: never)."""

    fail_on: Outcome = Outcome.FAIL
    warn_on: Outcome | None = Outcome.INCOMPLETE

    def __post_init__(self) -> None:
        if self.fail_on is Outcome.PASS or self.warn_on is Outcome.PASS:
            raise PolicyError("a passing check cannot be made to fail or warn")

    def treat(self, outcome: Outcome | str) -> Treatment:
        found = Outcome(outcome)
        if found is Outcome.PASS:
            return Treatment.PASS
        if found.severity >= self.fail_on.severity:
            return Treatment.FAIL
        if self.warn_on is not None and found.severity >= self.warn_on.severity:
            return Treatment.WARN
        return Treatment.PASS

    def failing_circuits(self, verdicts: Iterable[Mapping[str, Any]]) -> int:
        """How many circuits (verdict dicts of a verify body) fail under this policy."""
        return sum(1 for v in verdicts if self.treat(v["outcome"]) is Treatment.FAIL)

    def describe(self) -> str:
        warn = "never" if self.warn_on is None else f"{self.warn_on.value} or worse"
        return f"fail on {self.fail_on.value} or worse; warn on {warn}"

    def as_dict(self) -> dict[str, str]:
        return {"fail_on": self.fail_on.value,
                "warn_on": "none" if self.warn_on is None else self.warn_on.value}


DEFAULT_POLICY = Policy()


def policy_from_names(fail_on: str | None = None, warn_on: str | None = None) -> Policy:
    """Build a policy from its spellings (None: the default); raise :class:`PolicyError`."""
    fail_name = fail_on or DEFAULT_POLICY.fail_on.value
    warn_name = warn_on or DEFAULT_POLICY.as_dict()["warn_on"]
    if fail_name not in FAIL_ON_CHOICES:
        raise PolicyError(f"fail_on must be one of {', '.join(FAIL_ON_CHOICES)}, not {fail_name!r}")
    if warn_name not in WARN_ON_CHOICES:
        raise PolicyError(f"warn_on must be one of {', '.join(WARN_ON_CHOICES)}, not {warn_name!r}")
    return Policy(fail_on=Outcome(fail_name),
                  warn_on=None if warn_name == "none" else Outcome(warn_name))
