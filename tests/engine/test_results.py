"""CheckResult's contract: a frozen, slotted, keyword-only dataclass with known ids, never equal
to a tuple, and an ``as_dict`` whose inlined margin and rounding agree with :attr:`CheckResult.margin`."""

from __future__ import annotations

import copy
import dataclasses
import math
import pickle

import pytest
from hypothesis import given
from hypothesis import strategies as st

from engine.results import CheckResult, Outcome


def _result(**extra: object) -> CheckResult:
    return CheckResult(check="loop_impedance", outcome=Outcome.PASS, detail="d", **extra)  # type: ignore[arg-type]


def test_only_keywords_and_known_check_ids() -> None:
    with pytest.raises(TypeError):
        CheckResult("loop_impedance", Outcome.PASS, "d")  # type: ignore[misc]
    with pytest.raises(ValueError, match="unknown check id"):
        CheckResult(check="zs", outcome=Outcome.PASS, detail="d")
    with pytest.raises(ValueError, match="unknown check id"):
        CheckResult(check=["loop_impedance"], outcome=Outcome.PASS, detail="d")  # type: ignore[arg-type]


def test_immutable_and_copies_by_keyword() -> None:
    result = _result(value=0.9, limit=1.37, limit_kind="max", inputs={"ze_ohm": 0.35})
    with pytest.raises(AttributeError):
        result.value = 0.1  # type: ignore[misc]
    with pytest.raises(TypeError):
        _result().inputs["x"] = 1  # type: ignore[index]  # the shared empty default is read-only
    assert pickle.loads(pickle.dumps(result)) == result
    assert copy.deepcopy(result) == result


def test_a_frozen_slotted_keyword_only_dataclass_that_is_no_tuple() -> None:
    """As engine/README.md says: a frozen, slotted, keyword-only dataclass; a tuple never equals it."""
    result = _result(value=0.9, limit=1.37, limit_kind="max")
    assert dataclasses.is_dataclass(result) and not isinstance(result, tuple)
    params = type(result).__dataclass_params__  # type: ignore[attr-defined]
    assert params.frozen and hasattr(type(result), "__slots__")
    assert all(f.kw_only for f in dataclasses.fields(result))
    as_tuple = tuple(getattr(result, f.name) for f in dataclasses.fields(result))
    assert result != as_tuple and as_tuple != result
    assert result == _result(value=0.9, limit=1.37, limit_kind="max")


def test_default_inputs_survive_pickle_and_copy() -> None:
    """A result with the shared read-only "no inputs" pickles and copies like any other."""
    bare = _result()
    assert pickle.loads(pickle.dumps(bare)) == bare
    assert copy.copy(bare) == bare and copy.deepcopy(bare).inputs == {}


_FIGURES = st.one_of(st.none(), st.floats(allow_nan=True, allow_infinity=True),
                     st.floats(min_value=-1e-8, max_value=1e-8))


@given(value=_FIGURES, limit=_FIGURES, kind=st.sampled_from([None, "max", "min"]))
def test_as_dict_margin_and_rounding_match_the_plain_definitions(value: float | None, limit: float | None,
                                                                 kind: str | None) -> None:
    result = _result(value=value, limit=limit, limit_kind=kind, inputs={"x": value, "n": 3})
    out = result.as_dict()
    margin = result.margin
    assert out.get("margin") == (None if margin is None else round(margin, 4)) or (
        margin is not None and math.isnan(margin) and math.isnan(out["margin"]))

    def plain_round(x: float | None) -> float | None:  # results.py's rule, written out once more
        if x is None or not math.isfinite(x):
            return None
        return 0.0 if abs(x) < 1e-9 else float(f"{x:.6g}")

    assert out.get("value") == plain_round(value)  # a key with no figure is left out (engine/README.md)
    assert out.get("limit") == plain_round(limit)
    assert out["inputs"] == {"x": plain_round(value), "n": 3}
