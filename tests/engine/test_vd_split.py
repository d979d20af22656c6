"""The R1+R2 split (split method): it sums back, matches IEC 60228, and never exceeds the quick figure
when the cpc is no larger than the neutral."""

from __future__ import annotations

import math
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from engine import CheckResult, build_record, load_builtin, verify
from engine.conductors import resistance_ohm_per_m_20c

SIZES = (1.0, 1.5, 2.5, 4.0, 6.0, 10.0, 16.0, 25.0, 35.0)

# Handbook R1+R2 at 20 °C, mΩ/m (Guide to the Wiring Regulations, App. 4 Table 4.3 [secondary]);
# the split of these must give back IEC 60228's line resistance (Table 2 [standard/secondary]).
HANDBOOK_PAIRS = {(6, 2.5): 10.49, (10, 4): 6.44, (2.5, 1.5): 19.51, (1.5, 1.0): 30.2}


def vd(**fields: Any) -> CheckResult:
    record, errors = build_record({"board": "B", "circuit": "1", **fields})
    assert record is not None and not errors, errors
    [verdict] = verify([record])
    [check] = [c for c in verdict.checks if c.check == "voltage_drop"]
    return check


@pytest.mark.parametrize(("pair", "mohm_per_m"), sorted(HANDBOOK_PAIRS.items()))
def test_split_of_handbook_r1r2_gives_iec60228_line_resistance(pair: tuple[float, float],
                                                               mohm_per_m: float) -> None:
    """Our cases 6/2.5, 10/4, 2.5/1.5, 1.5/1.0 over 40 m: R1 from the area split is within 1.5 % of r_line × L
    (IEC 60228 [standard/secondary]), R1 + R2 sums back to R1+R2, and Rn = R1 for a neutral the size of the
    line."""
    line, cpc = pair
    length = 40.0
    r1r2 = mohm_per_m * length / 1000
    check = vd(r1_r2_ohm=r1r2, line_mm2=line, cpc_mm2=cpc, design_current_a=10)
    r1 = check.inputs["r1_ohm"]
    r2 = r1r2 - r1
    r_line = resistance_ohm_per_m_20c(load_builtin("bs7671-2018-a2"), "copper", line)
    assert r_line is not None
    assert r1 == pytest.approx(r_line * length, rel=0.015)
    assert r1 + r2 == pytest.approx(r1r2, rel=1e-12)
    assert r2 / r1 == pytest.approx(line / cpc, rel=1e-12)  # the split's own premise: R ∝ 1/A
    assert check.inputs["rn_ohm"] == pytest.approx(r1, rel=1e-12)
    assert check.value is not None and check.value <= check.inputs["quick_v"]


readings = st.floats(min_value=0.01, max_value=5.0, allow_nan=False)
currents = st.floats(min_value=1.0, max_value=125.0, allow_nan=False)


@settings(max_examples=200, deadline=None)
@given(line=st.sampled_from(SIZES), cpc=st.sampled_from(SIZES), neutral=st.sampled_from(SIZES),
       r1r2=readings, amps=currents, test_temp=st.floats(min_value=0, max_value=35))
def test_area_split_property(line: float, cpc: float, neutral: float, r1r2: float, amps: float,
                             test_temp: float) -> None:
    """For any sizes and readings: R1 + R2 = R1+R2, Rn = R1·A_line/A_neutral, VD = (R1 + Rn)·F·I,
    and split ≤ quick exactly when cpc ≤ neutral (derived from the split formulas [derived])."""
    check = vd(r1_r2_ohm=r1r2, line_mm2=line, cpc_mm2=cpc, neutral_mm2=neutral,
               design_current_a=amps, test_temp_c=test_temp)
    r1, rn, f = check.inputs["r1_ohm"], check.inputs["rn_ohm"], check.inputs["temp_factor"]
    r2 = r1r2 * line / (line + cpc)
    assert r1 + r2 == pytest.approx(r1r2, rel=1e-9)
    assert rn == pytest.approx(r1 * line / neutral, rel=1e-9)
    assert check.value == pytest.approx((r1 + rn) * f * amps, rel=1e-9)
    quick = check.inputs["quick_v"]
    if cpc <= neutral:
        assert check.value <= quick * (1 + 1e-12)
    else:
        assert check.value > quick


@settings(max_examples=200, deadline=None)
@given(line=st.sampled_from(SIZES), neutral=st.sampled_from(SIZES), r1r2=readings,
       share=st.floats(min_value=1e-3, max_value=1.0), amps=currents)
def test_measured_r2_split_property(line: float, neutral: float, r1r2: float, share: float,
                                    amps: float) -> None:
    """With R2 measured: R1 = (R1+R2) − R2 sums back, and split ≤ quick exactly when Rn ≤ R2 [derived]."""
    # never above R1+R2 (that case is not split), never 0 Ω (no conductor reads 0 Ω: withheld)
    r2 = max(math.floor(r1r2 * share * 1e6) / 1e6, 1e-6)
    check = vd(r1_r2_ohm=r1r2, r2_ohm=r2, line_mm2=line, neutral_mm2=neutral, design_current_a=amps)
    r1, rn = check.inputs["r1_ohm"], check.inputs["rn_ohm"]
    assert check.inputs["r1_basis"] == "r1r2_minus_measured_r2"
    assert r1 + r2 == pytest.approx(r1r2, rel=1e-9, abs=1e-12)
    assert rn == pytest.approx(r1 * line / neutral, rel=1e-9, abs=1e-12)
    quick = check.inputs["quick_v"]
    if rn <= r2:
        assert check.value <= quick * (1 + 1e-9)
    else:
        assert check.value >= quick * (1 - 1e-9)
