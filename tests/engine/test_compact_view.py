"""The compact view (issue 18): the full view's outcomes, values and limits, with no sentence built."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from types import FrameType
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from engine import CircuitRecord, Ruleset, builtin_ruleset_ids, load_builtin, verify, verify_compact
from engine.compact import COMPACT_COLUMNS, decode, encode
from engine.stream import verify_stream
from tests.bench import synthetic
from tests.engine.golden_set import jobs
from tests.engine.test_verify_properties import sites
from tests.strategies import records

_SETTINGS = settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
_ENGINE = Path(__file__).resolve().parents[2] / "engine"


def _assert_same_as_full(batch: list[CircuitRecord], ruleset: str | Ruleset, site: Any = None) -> None:
    full = verify(batch, ruleset, site=site)
    compact = verify(batch, ruleset, site=site, view="compact")
    assert compact == [v.compact() for v in full]
    rules = ruleset if isinstance(ruleset, Ruleset) else load_builtin(ruleset)
    for verdict, shown in zip(full, compact, strict=True):
        said = verdict.as_dict()
        assert (shown["board"], shown["circuit"], shown["outcome"]) == (said["board"], said["circuit"],
                                                                       said["outcome"])
        assert len(shown["checks"]) == len(said["checks"])
        for row, check in zip(shown["checks"], said["checks"], strict=True):
            assert len(row) == len(COMPACT_COLUMNS)
            assert row[:6] == (check["check"], check["outcome"], check.get("value"), check["relation"],
                               check.get("limit"), check.get("unit"))
            _assert_basis_resolves(row[6], check.get("basis"), rules)


def _assert_basis_resolves(basis_id: str | None, text: str | None, rules: Ruleset) -> None:
    """The id names the ruleset entry the full view's basis begins with (or the record's own figure)."""
    assert (basis_id is None) == (text is None), (basis_id, text)
    if basis_id is None or text is None:
        return
    if basis_id.startswith("record:"):
        assert text.startswith("record: "), (basis_id, text)
        return
    section, key = basis_id.split(".", 1)
    entry = rules.entry(section, key)
    assert text.startswith(entry.value if key == "basis" else entry.source), (basis_id, text)


@_SETTINGS
@given(batch=st.lists(records(), min_size=1, max_size=4), ruleset=st.sampled_from(builtin_ruleset_ids()))
def test_compact_carries_the_full_views_outcomes_values_and_limits(batch: list[CircuitRecord],
                                                                   ruleset: str) -> None:
    """For any records: each compact row is its full result's check, outcome, value, relation, limit and
    unit, and its basis id names the ruleset entry the full basis text is taken from."""
    _assert_same_as_full(batch, ruleset)


@_SETTINGS
@given(batch=st.lists(records(), min_size=1, max_size=4), site=sites(),
       ruleset=st.sampled_from(builtin_ruleset_ids()))
def test_compact_equals_full_with_any_site(batch: list[CircuitRecord], site: Any, ruleset: str) -> None:
    """The same with inherited (and refused, marked, impossible) board and installation values."""
    _assert_same_as_full(batch, ruleset, site)


@pytest.mark.parametrize("job", jobs(), ids=lambda job: job.name)
def test_compact_equals_full_over_the_golden_set(job: Any) -> None:
    """Over the ~2,000 varied circuits of the golden set (notation, marks, feeders, a partial ruleset)."""
    _assert_same_as_full(list(job.records), job.ruleset, job.site)


def test_verify_compact_is_the_compact_view_and_only_cuts_the_output() -> None:
    """verify_compact is verify(view="compact"); ``only`` gives those circuits' rows, as a full call does."""
    job = jobs()[0]
    every = verify_compact(job.records, job.ruleset)
    assert every == verify(job.records, job.ruleset, view="compact")
    wanted = {(v["board"], v["circuit"]) for v in every[3:40:7]}
    some = verify(job.records, job.ruleset, only=wanted, view="compact")
    assert some == [v for v in every if (v["board"], v["circuit"]) in wanted]
    with pytest.raises(ValueError, match="view"):
        verify(job.records, view="short")  # type: ignore[call-overload]


def test_stream_gives_the_same_compact_verdicts() -> None:
    """verify_stream(view="compact") is the compact view of verify_stream's full verdicts; on records grouped
    by board with their feeders marked as distribution circuits it equals verify(view="compact")."""
    for job in jobs()[:3]:
        full = list(verify_stream(job.records, job.ruleset, site=job.site))
        shown = list(verify_stream(job.records, job.ruleset, site=job.site, view="compact"))
        assert shown == [v.compact() for v in full]
    grouped = synthetic.records(180)
    assert list(verify_stream(grouped, view="compact")) == verify(grouped, view="compact")


def test_legend_encoding_round_trips_through_json() -> None:
    """encode writes each (check, unit, basis_id) once; decode of its JSON gives the verdicts back."""
    job = jobs()[2]
    verdicts = verify(job.records, job.ruleset, site=job.site, view="compact")
    answer = encode(verdicts)
    assert len(answer["legend"]) == len(set(answer["legend"])) < 100
    parsed = json.loads(json.dumps(answer, ensure_ascii=False))
    assert [{**v, "checks": [tuple(r) for r in v["checks"]]} for v in decode(parsed)] == verdicts
    assert decode(answer) == verdicts


def _renderer_calls(work: Any) -> list[str]:
    """Renderers (lambdas and nested sentence builders in the checks) called while ``work`` runs."""
    called: list[str] = []
    checks = str(_ENGINE / "checks")
    watched = {str(_ENGINE / "plausibility.py"), str(_ENGINE / "findings.py")}

    def profile(frame: FrameType, event: str, _arg: Any) -> None:
        if event != "call":
            return
        code = frame.f_code
        name = code.co_name
        where = code.co_filename
        nested = "<locals>" in code.co_qualname and (name == "<lambda>" or not name.startswith("<"))
        if where.startswith(checks) and nested:  # a lambda or nested def in a check: they all render words
            called.append(f"{Path(where).name}:{code.co_firstlineno} {code.co_qualname}")
        elif where in watched and name in ("render", "to_result", "_marked", "_refused", "_impossible"):
            called.append(f"{Path(where).name} {name}")

    sys.setprofile(profile)
    try:
        work()
    finally:
        sys.setprofile(None)
    return called


def test_the_compact_view_builds_no_sentence() -> None:
    """No renderer runs for the compact view; the full view of the same records runs them (so the probe
    works)."""
    sample = [job for job in jobs() if job.name in ("bs-notation", "bs-site")]
    assert _renderer_calls(lambda: [verify(job.records, job.ruleset, site=job.site, view="compact")
                                    for job in sample]) == []
    assert _renderer_calls(lambda: [verify(job.records, job.ruleset, site=job.site) for job in sample])
