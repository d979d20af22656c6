"""verify(only=…): the asked-for circuits' verdicts, each equal to the one a full call gives."""

from __future__ import annotations

import gc

import pytest

from engine import verify
from engine.stream import verify_stream
from tests.bench import synthetic


def test_only_gives_the_full_calls_verdicts_for_those_keys() -> None:
    """Board-level checks (Ze consensus, feeders) still see every record; only the output is cut."""
    records = synthetic.records(120)  # two groups: origin boards, fed sub-boards, TT boards
    wanted = {records[i].key for i in (0, 5, 23, 47, 119)}
    full = {v.key: v.as_dict() for v in verify(records)}
    some = verify(records, only=wanted)
    assert {v.key for v in some} == wanted
    assert all(v.as_dict() == full[v.key] for v in some)


def test_only_empty_and_unknown_keys_give_nothing() -> None:
    """Keys that name no record are not invented into verdicts."""
    records = synthetic.records(10)
    assert verify(records, only=set()) == []
    assert verify(records, only={("NOPE", "1")}) == []


@pytest.mark.parametrize("enabled", [True, False])
def test_verify_leaves_the_collector_as_it_found_it(enabled: bool) -> None:
    """verify() leaves the garbage collector as it found it, enabled or disabled."""
    records = synthetic.records(5)
    (gc.enable if enabled else gc.disable)()
    try:
        verify(records)
        assert gc.isenabled() is enabled
    finally:
        gc.enable()


def test_verify_never_touches_the_collector(monkeypatch: pytest.MonkeyPatch) -> None:
    """No process-wide state in the engine: verify() and verify_stream() never pause the collector."""
    def refuse() -> None:
        raise AssertionError("the engine paused the garbage collector")

    monkeypatch.setattr(gc, "disable", refuse)
    records = synthetic.records(12)
    assert len(verify(records)) == 12
    assert len(list(verify_stream(records))) == 12
