"""The fail/warn policy: how each outcome counts for a pipeline.

The order it follows is the verdict's (engine/README.md): fail >
investigate > incomplete > pass; ``--fail-on investigate`` means investigate
counts as failing, ``--fail-on incomplete`` means both do (issue 8).
"""

from __future__ import annotations

import pytest

from api.render import Policy, PolicyError, Treatment, policy_from_names
from engine import Outcome

F, W, P = Treatment.FAIL, Treatment.WARN, Treatment.PASS

# (fail_on, warn_on) -> treatment of (fail, investigate, incomplete, pass)
CASES = [
    (("fail", "incomplete"), (F, W, W, P)),
    (("fail", "investigate"), (F, W, P, P)),
    (("fail", "none"), (F, P, P, P)),
    (("investigate", "incomplete"), (F, F, W, P)),
    (("investigate", "none"), (F, F, P, P)),
    (("incomplete", "none"), (F, F, F, P)),
    (("incomplete", "investigate"), (F, F, F, P)),  # fail wins over warn
]


@pytest.mark.parametrize(("names", "expected"), CASES)
def test_treatment_follows_the_contract_severity_order(names: tuple[str, str],
                                                       expected: tuple[Treatment, ...]) -> None:
    """Each policy fails at and above its threshold, warns between, passes below (the verdict's order)."""
    policy = policy_from_names(*names)
    got = tuple(policy.treat(o) for o in (Outcome.FAIL, Outcome.INVESTIGATE,
                                          Outcome.INCOMPLETE, Outcome.PASS))
    assert got == expected


def test_default_policy_fails_only_on_fail_and_warns_on_the_rest() -> None:
    """The default is --fail-on fail --warn-on incomplete, as the CLI documents."""
    assert policy_from_names() == Policy(fail_on=Outcome.FAIL, warn_on=Outcome.INCOMPLETE)


@pytest.mark.parametrize(("fail_on", "warn_on"), [("pass", None), ("never", None), (None, "pass"),
                                                  (None, "fail-ish")])
def test_misspelt_policy_is_an_error_value_with_a_code(fail_on: str | None, warn_on: str | None) -> None:
    """A policy that would hide a failure or is misspelt is refused with code bad_policy."""
    with pytest.raises(PolicyError) as caught:
        policy_from_names(fail_on, warn_on)
    assert caught.value.code == "bad_policy"


def test_failing_circuits_counts_circuit_outcomes() -> None:
    """A circuit fails under the policy exactly when its outcome (worst check) is treated as fail."""
    verdicts = [{"outcome": o} for o in ("pass", "fail", "investigate", "incomplete", "incomplete")]
    assert policy_from_names("fail").failing_circuits(verdicts) == 1
    assert policy_from_names("investigate").failing_circuits(verdicts) == 2
    assert policy_from_names("incomplete").failing_circuits(verdicts) == 4
