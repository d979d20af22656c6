"""Maximum Zs lookups against BS 7671:2018+A2:2022 Tables 41.2, 41.3 and 41.4."""

from __future__ import annotations

import pytest

from engine import load_builtin
from engine.protection import MaxZs, Missing, breaker_max_zs, fuse_max_zs, rule_of_thumb_limit

BS = load_builtin("bs7671-2018-a2")
IEC = load_builtin("iec-60364")

# BS 7671:2018 Table 41.3 (same in 2008+A3:2015), Ω at U0 = 230 V [secondary: two transcriptions agree].
# Columns: B (0.4 s and 5 s), C (0.4 s and 5 s), D 0.4 s, D 5 s.
TABLE_41_3 = {
    6: (7.28, 3.64, 1.82, 3.64),
    10: (4.37, 2.19, 1.09, 2.19),
    16: (2.73, 1.37, 0.68, 1.37),
    20: (2.19, 1.09, 0.55, 1.09),
    25: (1.75, 0.87, 0.44, 0.87),
    32: (1.37, 0.68, 0.34, 0.68),
    40: (1.09, 0.55, 0.27, 0.55),
    50: (0.87, 0.44, 0.22, 0.44),
    63: (0.69, 0.35, 0.17, 0.35),
    80: (0.55, 0.27, 0.14, 0.27),
    100: (0.44, 0.22, 0.11, 0.22),
    125: (0.35, 0.17, 0.09, 0.17),
}
_CELLS = [
    (curve, rating, seconds, row[col])
    for rating, row in TABLE_41_3.items()
    for curve, seconds, col in (("B", 0.4, 0), ("B", 5, 0), ("C", 0.4, 1), ("C", 5, 1), ("D", 0.4, 2),
                                ("D", 5, 3))
]


def _ohm(found: MaxZs | Missing) -> float:
    assert isinstance(found, MaxZs), found
    return found.ohm


@pytest.mark.parametrize(("curve", "rating", "seconds", "expected"), _CELLS)
def test_breaker_max_zs_equals_table_41_3(curve: str, rating: int, seconds: float, expected: float) -> None:
    """Cmin × U0 / Ia, rounded half-up to 2 dp, reproduces every cell of BS 7671:2018 Table 41.3
    [secondary]."""
    assert _ohm(breaker_max_zs(BS, curve, rating, 230, seconds)) == expected


def test_breaker_b3_and_bracketed_3a_values() -> None:
    """B3 = 14.57 Ω is Table 41.3 [secondary]; C3 7.28 and D3 3.64 are derived from 218.5/Ia [derived]."""
    assert _ohm(breaker_max_zs(BS, "B", 3, 230, 0.4)) == 14.57
    assert _ohm(breaker_max_zs(BS, "C", 3, 230, 0.4)) == 7.28  # derived from 218.5 / 30
    assert _ohm(breaker_max_zs(BS, "D", 3, 230, 0.4)) == 3.64  # derived from 218.5 / 60


def test_b20_rounds_half_up_to_2_19() -> None:
    """E14: 218.5 / 100 = 2.185 must come out as 2.19 (Table 41.3 rounding) [secondary/derived]."""
    assert _ohm(breaker_max_zs(BS, "B", 20, 230, 0.4)) == 2.19


def test_untabulated_b45_and_its_rule_of_thumb() -> None:
    """E3: B45 = 218.5/225 = 0.97 Ω, and the 0.8 rule gives 0.77 Ω [secondary]."""
    found = breaker_max_zs(BS, "B", 45, 230, 0.4)
    assert _ohm(found) == 0.97
    assert rule_of_thumb_limit(BS, 0.97) == 0.77


def test_rule_of_thumb_is_rounded_down() -> None:
    """E4: 32 A BS 88-3 at 0.4 s: 0.91 × 0.8 = 0.728 → 0.72 Ω, rounded down (trade article) [secondary]."""
    assert rule_of_thumb_limit(BS, _ohm(fuse_max_zs(BS, "BS 88-3", 32, 230, 0.4))) == 0.72


# BS 7671:2018 Table 41.2 (0.4 s) and Table 41.4 (5 s), Ω at 230 V [secondary, single source].
FUSES = {
    ("BS 88-2", 0.4): {2: 33.1, 4: 15.6, 6: 7.80, 10: 4.65, 16: 2.43, 20: 1.68, 25: 1.29, 32: 0.99,
                       40: 0.75, 50: 0.57, 63: 0.44},
    ("BS 88-2", 5): {2: 44, 4: 21, 6: 12, 10: 6.8, 16: 4.0, 20: 2.8, 25: 2.2, 32: 1.7, 40: 1.3, 50: 0.99,
                     63: 0.78, 80: 0.55, 100: 0.42, 125: 0.32, 160: 0.27, 200: 0.18},
    ("BS 88-3", 0.4): {5: 9.93, 16: 2.30, 20: 1.93, 32: 0.91, 45: 0.57, 63: 0.36},
    ("BS 88-3", 5): {5: 14.6, 16: 3.9, 20: 3.2, 32: 1.6, 45: 1.0, 63: 0.68, 80: 0.51, 100: 0.38},
    ("BS 3036", 0.4): {5: 9.10, 15: 2.43, 20: 1.68, 30: 1.04, 45: 0.56},
    ("BS 3036", 5): {5: 16.8, 15: 5.08, 20: 3.64, 30: 2.51, 45: 1.51, 60: 1.07, 100: 0.51},
    ("BS 1362", 0.4): {3: 15.6, 13: 2.30},
    ("BS 1362", 5): {3: 22.0, 13: 3.64},
}
_FUSE_CELLS = [(std, s, a, z) for (std, s), table in FUSES.items() for a, z in table.items()]


@pytest.mark.parametrize(("standard", "seconds", "rating", "expected"), _FUSE_CELLS)
def test_fuse_max_zs_equals_tables_41_2_and_41_4(standard: str, seconds: float, rating: int,
                                                 expected: float) -> None:
    """Each fuse lookup returns the literal value of BS 7671:2018 Table 41.2 / 41.4 [secondary, single
    source]."""
    assert _ohm(fuse_max_zs(BS, standard, rating, 230, seconds)) == expected


@pytest.mark.parametrize(("rating", "at_230_without_cmin", "expected"),
                         [(6, 8.21, 7.80), (10, 4.89, 4.65), (16, 2.56, 2.43), (20, 1.77, 1.68),
                          (25, 1.35, 1.29), (32, 1.04, 0.99)])
def test_bs88_2_table_agrees_with_the_2011_values_times_cmin(rating: int, at_230_without_cmin: float,
                                                             expected: float) -> None:
    """BS 88-2 0.4 s values ≈ 0.95 × the 2011 article's 230 V values (cross-check 1) [secondary/derived],
    ±0.01 Ω."""
    found = _ohm(fuse_max_zs(BS, "BS 88-2", rating, 230, 0.4))
    assert found == expected
    assert found == pytest.approx(0.95 * at_230_without_cmin, abs=0.01)  # the article rounds its inputs


@pytest.mark.parametrize(("rating", "seconds", "value_2008"), [(3, 0.4, 16.4), (3, 5, 23.2), (13, 0.4, 2.42),
                                                               (13, 5, 3.83)])
def test_bs1362_values_are_the_2008_values_times_cmin(rating: int, seconds: float, value_2008: float) -> None:
    """BS 1362: 2018 value = 0.95 × 2008 value to 3 figures (2008 values from memory; derived from Cmin)."""
    found = _ohm(fuse_max_zs(BS, "BS 1362", rating, 230, seconds))
    assert found == pytest.approx(0.95 * value_2008, rel=0.005)  # the tables print 3 significant figures


def test_doubtful_60a_bs3036_at_0_4_s_is_left_out() -> None:
    """The 60 A BS 3036 0.4 s value is doubtful (one source) [?]: left out, the maker's figure is asked."""
    found = fuse_max_zs(BS, "BS 3036", 60, 230, 0.4)
    assert isinstance(found, Missing)
    assert found.fields == ("device_max_zs_ohm",)


def test_fuse_rating_not_in_table_is_not_interpolated() -> None:
    """A 35 A BS 88-2 fuse is in neither table: missing, never interpolated (fuse limits follow curves)."""
    assert isinstance(fuse_max_zs(BS, "BS 88-2", 35, 230, 0.4), Missing)


def test_fuse_table_scales_with_u0() -> None:
    """At U0 = 240 V a fuse's Zs scales by 240/230 (derived from Zs = Cmin × U0 / Ia, Ia fixed)."""
    assert _ohm(fuse_max_zs(BS, "BS 88-3", 32, 240, 0.4)) == pytest.approx(0.91 * 240 / 230)


@pytest.mark.parametrize(("required_s", "column"), [(0.4, 0.4), (1, 0.4), (4.9, 0.4), (5, 5), (10, 5)])
def test_column_is_the_longest_time_not_above_the_required(required_s: float, column: float) -> None:
    """A required time between columns uses the shorter column: lower Zs, the conservative side."""
    found = fuse_max_zs(BS, "BS 88-2", 32, 230, required_s)
    assert isinstance(found, MaxZs)
    assert found.table_s == column
    assert found.ohm == FUSES[("BS 88-2", column)][32]


def test_breaker_serves_times_below_0_4_s_down_to_its_instantaneous_trip() -> None:
    """TT 0.2 s: B32 still 1.37 Ω (instantaneous trip under 0.1 s, from memory); 0.05 s needs the maker."""
    assert _ohm(breaker_max_zs(BS, "B", 32, 230, 0.2)) == 1.37
    assert isinstance(breaker_max_zs(BS, "B", 32, 230, 0.05), Missing)


def test_fuse_below_its_shortest_table_needs_the_makers_figure() -> None:
    """TT 0.2 s: no fuse table covers it, so device_max_zs_ohm is asked for."""
    found = fuse_max_zs(BS, "BS 88-3", 32, 230, 0.2)
    assert isinstance(found, Missing)
    assert "device_max_zs_ohm" in found.fields


@pytest.mark.parametrize(("curve", "rating", "expected"), [("B", 32, 230 / 160), ("C", 16, 230 / 160),
                                                           ("D", 10, 230 / 200), ("B", 6, 230 / 30)])
def test_iec_ruleset_uses_u0_over_ia_without_cmin(curve: str, rating: int, expected: float) -> None:
    """IEC 60364-4-41 411.4.4: Zs × Ia ≤ U0, no Cmin, no table rounding (from memory; derived from U0/Ia)."""
    assert _ohm(breaker_max_zs(IEC, curve, rating, 230, 0.4)) == pytest.approx(expected)


def test_iec_ruleset_has_no_bs_fuse_tables() -> None:
    """IEC 60364 publishes no fuse tables: a BS 88 fuse needs the maker's figure under the IEC ruleset."""
    assert isinstance(fuse_max_zs(IEC, "BS 88-3", 32, 230, 0.4), Missing)
