"""Property tests: no record, however odd, makes verify raise or hit an internal check error."""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import CircuitRecord, Reading, build_record, builtin_ruleset_ids, verify
from engine.results import CHECK_IDS, Outcome
from tests.strategies import record_inputs, records

_SETTINGS = settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _assert_clean(batch: list[CircuitRecord], ruleset: str) -> None:
    verdicts = verify(batch, ruleset)
    assert len(verdicts) == len({r.key for r in batch})
    for verdict in verdicts:
        codes = [e.get("code") for e in verdict.errors]
        assert "check_error" not in codes, verdict.errors
        assert verdict.outcome in set(Outcome)
        for check in verdict.checks:
            assert check.check in CHECK_IDS
            check.as_dict()  # every result can be rendered


@_SETTINGS
@given(batch=st.lists(records(), min_size=1, max_size=4), ruleset=st.sampled_from(builtin_ruleset_ids()))
def test_any_record_verifies_without_raising(batch: list[CircuitRecord], ruleset: str) -> None:
    """Any records the type allows (bounded readings, zeros, huge numbers) verify with no check_error."""
    _assert_clean(batch, ruleset)


@_SETTINGS
@given(data=st.lists(record_inputs(), min_size=1, max_size=3), ruleset=st.sampled_from(builtin_ruleset_ids()))
def test_any_loose_input_builds_and_verifies_without_raising(data: list[dict[str, object]],
                                                             ruleset: str) -> None:
    """Loose input through build_record never raises, and what it builds verifies cleanly."""
    batch = []
    for item in data:
        record, _errors = build_record(item)
        if record is not None:
            batch.append(record)
    _assert_clean(batch, ruleset)


def test_denormal_residual_current_is_no_rating() -> None:
    """Found by the property test: IΔn = 5e-324 mA divided 50 V by zero; it is now withheld as no IΔn."""
    record = CircuitRecord(board="DB1", circuit="1", earthing="TT", rcd_residual_ma=5e-324,
                           zs_ohm=Reading(value=0.5))
    [verdict] = verify([record])
    assert verdict.errors == ()
    loop = {c.check: c for c in verdict.checks}["loop_impedance"]
    assert loop.outcome is Outcome.INVESTIGATE and loop.inputs["field"] == "rcd_residual_ma"
