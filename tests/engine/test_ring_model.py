"""Ring voltage drop: the closed form I·(r1 + rn)/4·F against an independent network model of the ring."""

from __future__ import annotations

from fractions import Fraction
from typing import Any

import pytest

from engine import CheckResult, build_record, verify

SEGMENTS = 24  # even, so one node sits at the ring's mid-point


def solve(matrix: list[list[Fraction]], rhs: list[Fraction]) -> list[Fraction]:
    """Gaussian elimination in exact fractions (no shared code with the engine)."""
    n = len(rhs)
    a = [[*row, rhs[i]] for i, row in enumerate(matrix)]
    for col in range(n):
        pivot = next(r for r in range(col, n) if a[r][col] != 0)
        a[col], a[pivot] = a[pivot], a[col]
        for r in range(n):
            if r != col and a[r][col] != 0:
                k = a[r][col] / a[col][col]
                a[r] = [x - k * y for x, y in zip(a[r], a[col], strict=True)]
    return [a[i][n] / a[i][i] for i in range(n)]


def conductor_drop_by_nodal_analysis(total_ohm: Fraction, load_node: int, amps: Fraction) -> Fraction:
    """One ring conductor as SEGMENTS equal resistors, both ends at the board (node 0, held at 0 V);
    the load draws ``amps`` at ``load_node``. Returns the drop from the board to the load."""
    g = SEGMENTS / total_ohm
    unknown = list(range(1, SEGMENTS))  # node SEGMENTS is node 0 again: the ring closes at the board
    index = {node: i for i, node in enumerate(unknown)}
    matrix = [[Fraction(0)] * len(unknown) for _ in unknown]
    for node in unknown:
        for neighbour in (node - 1, node + 1):
            matrix[index[node]][index[node]] += g
            if neighbour % SEGMENTS != 0:
                matrix[index[node]][index[neighbour]] -= g
    rhs = [Fraction(0)] * len(unknown)
    rhs[index[load_node]] = -amps
    volts = solve(matrix, rhs)
    return -volts[index[load_node]]


def two_parallel_paths(total_ohm: Fraction, share: Fraction) -> Fraction:
    """Series/parallel: the two ways round the ring, share·r and (1 − share)·r, in parallel."""
    a, b = share * total_ohm, (1 - share) * total_ohm
    return a * b / (a + b)


def vd(**fields: Any) -> CheckResult:
    record, errors = build_record({"board": "B", "circuit": "R", "circuit_form": "ring", **fields})
    assert record is not None and not errors
    [verdict] = verify([record])
    [check] = [c for c in verdict.checks if c.check == "voltage_drop"]
    return check


@pytest.mark.parametrize(("r1", "rn", "amps", "test_temp"),
                         [("0.3705", "0.3705", 32, 20), ("0.52", "0.55", 30, 20), ("0.21", "0.24", 20, 12)])
def test_mid_point_closed_form_equals_network_model(r1: str, rn: str, amps: int, test_temp: float) -> None:
    """Concentrated load at the mid-point: engine's I·(r1 + rn)/4·F equals nodal analysis × F to 1e-9
    (E11's 50 m 2.5/1.5 ring, r1 = rn = 0.3705 Ω [derived], and two rings of our own)."""
    r1_f, rn_f, i_f = Fraction(r1), Fraction(rn), Fraction(amps)
    mid = SEGMENTS // 2
    network = (conductor_drop_by_nodal_analysis(r1_f, mid, i_f)
               + conductor_drop_by_nodal_analysis(rn_f, mid, i_f))
    paths = i_f * (two_parallel_paths(r1_f, Fraction(1, 2)) + two_parallel_paths(rn_f, Fraction(1, 2)))
    assert network == paths  # the two independent models agree exactly
    check = vd(ring_r1_ohm=r1, ring_rn_ohm=rn, device_rating_a=amps, test_temp_c=test_temp)
    factor = (1 + 0.004 * 50) / (1 + 0.004 * (test_temp - 20))  # F, derived from 1 + α(θ − 20), α = 0.004
    assert check.method == "ring_end_to_end"
    assert check.value == pytest.approx(float(network) * factor, abs=1e-9)


def test_mid_point_is_the_worst_place_for_the_load() -> None:
    """The drop of a ring with one concentrated load is greatest at the mid-point, so /4 is conservative."""
    r = Fraction("0.741")
    drops = [conductor_drop_by_nodal_analysis(r, node, Fraction(1)) for node in range(1, SEGMENTS)]
    assert max(drops) == drops[SEGMENTS // 2 - 1] == r / 4
    for node, drop in enumerate(drops, start=1):
        assert drop == two_parallel_paths(r, Fraction(node, SEGMENTS))


def test_e11_end_to_end_agrees_with_ring_tabulated_from_iec60228() -> None:
    """E11 [derived]: a 50 m 2.5 mm² ring reads r1 = rn = 0.3705 Ω at 20 °C; the end-to-end method and the
    tabulated method (2·r(70 °C)·I·L/4 from IEC 60228) give the same drop."""
    ends = vd(ring_r1_ohm=0.3705, ring_rn_ohm=0.3705, device_rating_a=32)
    tab = vd(line_mm2=2.5, length_m=50, device_rating_a=32)
    assert tab.method == "ring_tabulated"
    assert ends.value == pytest.approx(32 * 0.741 / 4 * 1.2)
    assert tab.value == pytest.approx(ends.value, rel=1e-9)
