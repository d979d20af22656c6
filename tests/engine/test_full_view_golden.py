"""The full view says exactly what it said before the numbers-first rework: every key, sentence and number.

The digests in ``golden/full_view.json`` were recorded from the engine at the
commit that added this test, before numbers and text were separated, over the
~2,000 circuits of :mod:`tests.engine.golden_set` (both rulesets, sites,
notation, marks, refused and impossible values, broken feeder chains, a partial
local ruleset).
"""

from __future__ import annotations

import json
from typing import Any

import pytest

from engine import CHECK_IDS, verify
from tests.engine.golden_set import GOLDEN, canonical, digest, jobs

_RECORDED: dict[str, Any] = json.loads(GOLDEN.read_text(encoding="utf-8"))


_CHECK_KEYS = ("check", "outcome", "value", "relation", "limit", "limit_kind", "unit", "margin", "method",
               "basis", "inputs", "detail")


def as_recorded(verdict: dict[str, Any]) -> dict[str, Any]:
    """Today's full verdict, checked to hold every key of a result in the recorded order (a ``null``
    where there is no figure: clients read the keys without asking whether they are there)."""
    for check in verdict["checks"]:
        assert list(check) == list(_CHECK_KEYS), list(check)
    return verdict


@pytest.mark.parametrize("job", jobs(), ids=lambda job: job.name)
def test_full_view_equals_the_recorded_output(job: Any) -> None:
    """Each job's full verdicts hash to the digests recorded before the rework, circuit by circuit."""
    recorded = _RECORDED[job.name]
    verdicts = [as_recorded(v.as_dict()) for v in verify(job.records, job.ruleset, site=job.site)]
    assert len(verdicts) == recorded["circuits"]
    for verdict, expected in zip(verdicts, recorded["digests"], strict=True):
        assert digest(verdict) == expected, (verdict["board"], verdict["circuit"], canonical(verdict))


def test_the_golden_set_reaches_every_check_and_outcome() -> None:
    """The recorded set is worth its digests: every check id with every outcome it can give."""
    seen: set[tuple[str, str]] = set()
    for job in jobs():
        for verdict in verify(job.records, job.ruleset, site=job.site):
            seen.update((c.check, c.outcome.value) for c in verdict.checks)
    never = {("polarity", "investigate"), ("external_impedance", "fail"), ("loop_consistency", "fail")}
    outcomes = ("pass", "fail", "investigate", "incomplete")
    # previous_visit runs only when verify() is given a previous visit, which the recorded set has not
    # (so its digests stay as recorded): tests/engine/test_previous_visit.py reaches each of its outcomes.
    wanted = {(check, outcome) for check in CHECK_IDS if check != "previous_visit" for outcome in outcomes}
    assert wanted - never <= seen, sorted(wanted - never - seen)
