"""IEC 60228 conductor resistances and their temperature corrections against published figures."""

from __future__ import annotations

import math

import pytest

from engine import load_builtin
from engine.conductors import (
    operating_ohm_per_m,
    resistance_at_test_temp,
    resistance_ohm_per_m_20c,
    table_sizes,
)
from engine.temperature import temperature_factor

RULESETS = ("bs7671-2018-a2", "iec-60364")

# IEC 60228 Tables 1/2, maximum resistance at 20 °C, Ω/km, plain copper class 2 and aluminium class 2
# [standard/secondary], as several transcriptions of the standard agree.
IEC60228_CU = {1.0: 18.1, 1.5: 12.1, 2.5: 7.41, 4: 4.61, 6: 3.08, 10: 1.83, 16: 1.15, 25: 0.727,
               35: 0.524, 50: 0.387, 70: 0.268, 95: 0.193, 120: 0.153, 150: 0.124, 185: 0.0991,
               240: 0.0754, 300: 0.0601}
IEC60228_AL = {10: 3.08, 16: 1.91, 25: 1.20, 35: 0.868, 50: 0.641, 70: 0.443, 95: 0.320, 120: 0.253,
               150: 0.206, 185: 0.164, 240: 0.125, 300: 0.100}


@pytest.mark.parametrize("rid", RULESETS)
def test_ruleset_tables_match_iec60228(rid: str) -> None:
    """Both rulesets hold exactly the IEC 60228 Table 2 maxima for copper and aluminium
    [standard/secondary]."""
    rules = load_builtin(rid)
    for material, table in (("copper", IEC60228_CU), ("aluminium", IEC60228_AL)):
        assert table_sizes(rules, material) == tuple(sorted(float(s) for s in table))
        for size, ohm_per_km in table.items():
            assert resistance_ohm_per_m_20c(rules, material, size) == pytest.approx(ohm_per_km / 1000)


def test_untabulated_size_gives_none_not_a_guess() -> None:
    """A size IEC 60228 does not list (3 mm²; aluminium 2.5 mm²) is None, never interpolated."""
    rules = load_builtin("bs7671-2018-a2")
    assert resistance_ohm_per_m_20c(rules, "copper", 3.0) is None
    assert resistance_ohm_per_m_20c(rules, "aluminium", 2.5) is None
    assert resistance_ohm_per_m_20c(rules, "copper", None) is None


# Handbook R1+R2 at 20 °C, mΩ/m: Guide to the Wiring Regulations (17th ed.) App. 4 Tables 4.2/4.3 [secondary];
# 1.0/1.0 = 36.2 is [derived] (sum of the IEC 60228 values).
HANDBOOK_R1R2_MOHM_PER_M = {(1.5, 1.5): 24.2, (2.5, 2.5): 14.82, (4, 4): 9.22, (6, 6): 6.16,
                            (10, 10): 3.66, (16, 16): 2.30, (25, 25): 1.454, (1.0, 1.0): 36.2,
                            (1.5, 1.0): 30.2, (2.5, 1.5): 19.51, (4, 1.5): 16.71, (6, 2.5): 10.49,
                            (10, 4): 6.44, (16, 6): 4.23}


@pytest.mark.parametrize(("pair", "mohm"), sorted(HANDBOOK_R1R2_MOHM_PER_M.items()))
def test_line_plus_cpc_reproduces_handbook_r1r2_table(pair: tuple[float, float], mohm: float) -> None:
    """r_line + r_cpc at 20 °C equals the handbook's R1+R2 per metre (GN Wiring Regs App. 4 [secondary])."""
    rules = load_builtin("bs7671-2018-a2")
    line, cpc = pair
    total = resistance_at_test_temp(rules, "copper", line, 20.0)
    cpc_r = resistance_at_test_temp(rules, "copper", cpc, 20.0)
    assert total is not None and cpc_r is not None
    assert (total + cpc_r) * 1000 == pytest.approx(mohm, abs=0.006)


def test_alpha_multipliers_1_20_and_1_28() -> None:
    """F from 20 °C is 1.20 at 70 °C and 1.28 at 90 °C with α = 0.004 (OSG/GN3 multipliers [memory])."""
    alpha = load_builtin("bs7671-2018-a2").value("temperature", "alpha_per_k")
    assert temperature_factor(alpha, 70, 20) == pytest.approx(1.20, abs=1e-12)
    assert temperature_factor(alpha, 90, 20) == pytest.approx(1.28, abs=1e-12)


def test_iec60228_coefficient_against_the_trade_rule_of_2_percent_per_5_degrees() -> None:
    """IEC 60228's 0.00393 /K gives 1.1965/1.2751; the "2 % per 5 °C" rule (common practice) gives 1.20/1.28.

    The difference is 0.29 % at 70 °C and 0.38 % at 90 °C ([derived] from α, and [practice]).
    """
    rules = load_builtin("bs7671-2018-a2")
    iec_alpha = rules.value("temperature", "alpha_iec60228_copper_per_k")
    assert iec_alpha == 0.00393  # IEC 60228 Annex B: 254.5/(234.5 + t) [secondary]
    for theta, trade in ((70, 1.20), (90, 1.28)):
        iec = temperature_factor(iec_alpha, theta, 20)
        rule_of_thumb = 1 + 0.02 * (theta - 20) / 5  # common practice: 2 % per 5 °C
        assert rule_of_thumb == pytest.approx(trade)
        assert iec == pytest.approx(254.5 / (234.5 + 20) * (234.5 + theta) / 254.5, rel=1e-3)
        difference = (rule_of_thumb - iec) / iec
        assert difference == pytest.approx({70: 0.0029, 90: 0.0038}[theta], abs=0.0002)


def test_e12_correction_from_25_degrees_to_20() -> None:
    """E12 [derived]: copper read at 25 °C corrects to 20 °C by × 0.98073 (IEC 60228 Annex B); α 0.004:
    0.98039."""
    rules = load_builtin("bs7671-2018-a2")
    at_25 = resistance_at_test_temp(rules, "copper", 2.5, 25.0)
    at_20 = resistance_ohm_per_m_20c(rules, "copper", 2.5)
    assert at_25 is not None and at_20 is not None
    assert at_20 / at_25 == pytest.approx(254.5 / 259.5, rel=2e-5)
    assert at_20 / at_25 == pytest.approx(0.98073, abs=2e-5)
    assert 1 / temperature_factor(0.004, 25, 20) == pytest.approx(0.98039, abs=1e-5)


def test_aluminium_uses_its_own_annex_b_coefficient() -> None:
    """Aluminium corrects with 248/(228 + t) (IEC 60228 Annex B [secondary]), not copper's 254.5/(234.5 +
    t)."""
    rules = load_builtin("iec-60364")
    at_30 = resistance_at_test_temp(rules, "aluminium", 16, 30.0)
    assert at_30 == pytest.approx(1.91e-3 * (228 + 30) / 248, rel=5e-4)


# BS 7671 Appendix 4, 70 °C thermoplastic copper, mV/A/m (Tables 4D5, 4D2B, 4D1B): the 1-ph 2-core row is
# [secondary]; the 3-ph row (Table 4D2B) is from memory [memory].
BS7671_70C_1PH = {1.0: 44, 1.5: 29, 2.5: 18, 4: 11, 6: 7.3, 10: 4.4, 16: 2.8}
BS7671_70C_3PH_FROM_MEMORY = {1.0: 38, 1.5: 25, 2.5: 15, 4: 9.5, 6: 6.4, 10: 3.8, 16: 2.4}
# Table 4E1B, 90 °C thermosetting single-core copper [secondary]: 2 cables 1-ph; 3 or 4 cables 3-ph.
BS7671_90C_1PH = {1.0: 46, 1.5: 31, 2.5: 19, 4: 12, 6: 7.9, 10: 4.7, 16: 2.9}
BS7671_90C_3PH = {1.0: 40, 1.5: 27, 2.5: 16, 4: 10, 6: 6.8, 10: 4.0, 16: 2.5}


@pytest.mark.parametrize(
    ("theta", "table", "phases"),
    [(70, BS7671_70C_1PH, 1), (70, BS7671_70C_3PH_FROM_MEMORY, 3), (90, BS7671_90C_1PH, 1),
     (90, BS7671_90C_3PH, 3)],
    ids=["70C-1ph-C2", "70C-3ph-from-memory", "90C-1ph-4E1B-C2", "90C-3ph-4E1B-C2"],
)
def test_mv_per_a_m_derived_from_iec60228_agrees_with_bs7671_appendix_4(
        theta: float, table: dict[float, float], phases: int) -> None:
    """2·r(θ) (1-ph) or √3·r(θ) (3-ph line to line) from IEC 60228 agrees with BS 7671 App. 4 to ±3 %."""
    rules = load_builtin("bs7671-2018-a2")
    for size, tabulated in table.items():
        r = operating_ohm_per_m(rules, "copper", size, theta)
        assert r is not None
        derived = (2 if phases == 1 else math.sqrt(3)) * r * 1000
        assert derived == pytest.approx(tabulated, rel=0.03), size
