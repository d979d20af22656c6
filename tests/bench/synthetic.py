"""Invented installations for the benchmarks: boards whose circuits exercise every check.

Invariants:
- Deterministic for a seed; produced lazily, board by board, so a million rows
  are never held (the streaming benchmark relies on it).
- Each group of three boards is an origin board (TN-C-S, Ze and PFC recorded,
  a distribution circuit), a sub-board fed from it (``board_fed_from``) and a
  TT board (RA, RCDs). Together their circuits reach every check id (``engine.CHECK_IDS``):
  rings, RCDs, TT electrodes, feeders, three-phase circuits, voltage drop.
- Values are our own invented scenario, drawn around typical readings with a
  few out of range, so passes, fails and investigates all occur. They are load,
  not evidence: no test uses them to show a rule is right.
"""

from __future__ import annotations

import random
from collections.abc import Iterator

from engine import CircuitRecord, build_record

__all__ = ["COLUMNS", "board_rows", "csv_lines", "records", "rows"]

COLUMNS: tuple[str, ...] = (
    "board", "circuit", "description", "board_fed_from", "phases", "earthing", "circuit_form",
    "circuit_role", "socket_outlets", "load_type", "design_current_a", "device_kind",
    "device_standard", "device_curve", "device_rating_a", "device_breaking_ka", "rcd_residual_ma",
    "rcd_type", "line_mm2", "cpc_mm2", "cable_type", "reference_method", "length_m", "r1_r2_ohm",
    "ring_r1_ohm", "ring_rn_ohm", "ring_r2_ohm", "ir_test_v", "ir_ll_mohm", "ir_le_mohm", "polarity_ok",
    "ze_ohm", "zs_ohm",
    "pfc_ka", "rcd_trip_ms", "rcd_trip_5x_ms", "rcd_half_no_trip", "ra_ohm",
)

Row = dict[str, str]


def _ir(rng: random.Random) -> str:
    roll = rng.random()
    return ">999" if roll < 0.6 else ("OL" if roll < 0.65 else f"{rng.randint(1, 400)}")


def _common(rng: random.Random, board: str, circuit: int, earthing: str) -> Row:
    return {"board": board, "circuit": str(circuit), "earthing": earthing, "ir_test_v": "500",
            "ir_ll_mohm": _ir(rng), "ir_le_mohm": _ir(rng),
            "polarity_ok": "yes" if rng.random() < 0.98 else "no"}


def _radial(rng: random.Random, row: Row, *, rating: int, curve: str, line: float, cpc: float,
            load: str, ze: float, rcd: bool) -> Row:
    length = rng.randint(4, 30)
    r1r2 = round(length * (18.1 + 18.1 * line / cpc) / line / 1000 * rng.uniform(0.9, 1.3), 3)
    row.update({"circuit_form": "radial", "load_type": load, "device_kind": "rcbo" if rcd else "breaker",
                "device_standard": "BS EN 61009" if rcd else "BS EN 60898", "device_curve": curve,
                "device_rating_a": str(rating), "line_mm2": str(line), "cpc_mm2": str(cpc),
                "cable_type": "twin_and_earth", "reference_method": "C", "length_m": str(length),
                "r1_r2_ohm": f"{r1r2}", "design_current_a": f"{rating * 0.6:g}",
                "zs_ohm": f"{round(ze + r1r2 * rng.uniform(0.95, 1.15), 3)}"})
    if rcd:
        _rcd(rng, row)
    return row


def _rcd(rng: random.Random, row: Row) -> None:
    row.update({"rcd_residual_ma": "30", "rcd_type": rng.choice(("A", "AC", "F")),
                "rcd_trip_ms": f"{rng.randint(12, 320)}", "rcd_trip_5x_ms": f"{rng.randint(8, 41)}",
                "rcd_half_no_trip": "yes"})


def _ring(rng: random.Random, row: Row, ze: float) -> Row:
    r1 = round(rng.uniform(0.2, 0.9), 3)
    r2 = round(r1 * 2.5 / 1.5 * rng.uniform(0.97, 1.03), 3)
    r1r2 = round((r1 + r2) / 4 * rng.uniform(0.97, 1.1), 3)
    row.update({"circuit_form": "ring", "socket_outlets": "yes", "load_type": "other",
                "device_kind": "rcbo", "device_standard": "BS EN 61009", "device_curve": "B",
                "device_rating_a": "32", "line_mm2": "2.5", "cpc_mm2": "1.5",
                "cable_type": "twin_and_earth", "reference_method": "C",
                "ring_r1_ohm": f"{r1}", "ring_rn_ohm": f"{round(r1 * rng.uniform(0.97, 1.03), 3)}",
                "ring_r2_ohm": f"{r2}", "r1_r2_ohm": f"{r1r2}",
                "zs_ohm": f"{round(ze + r1r2 * rng.uniform(0.97, 1.1), 3)}"})
    _rcd(rng, row)
    return row


def board_rows(group: int, rng: random.Random, circuits: int = 20) -> Iterator[Row]:
    """The rows of one group of three boards (origin, sub-board, TT), ``circuits`` each."""
    main, sub, tt = f"G{group}-DB1", f"G{group}-DB2", f"G{group}-TT"
    ze = round(rng.uniform(0.12, 0.35), 2)
    for n in range(1, circuits + 1):
        row = _common(rng, main, n, "TN-C-S")
        row.update({"ze_ohm": f"{ze}", "pfc_ka": f"{round(rng.uniform(0.8, 2.5), 2)}",
                    "device_breaking_ka": "6"})
        kind = n % 5
        if n == 1:  # the feeder of the sub-board: a distribution circuit
            row.update({"description": "Feed to DB2", "circuit_role": "distribution",
                        "device_kind": "fuse", "device_standard": "BS 88-2", "device_rating_a": "63",
                        "line_mm2": "16", "cpc_mm2": "16", "cable_type": "multicore", "reference_method": "C",
                        "length_m": "25", "design_current_a": "45",
                        "r1_r2_ohm": "0.029", "zs_ohm": f"{round(ze + 0.03, 3)}"})
        elif n == 2:  # three-phase final circuit
            _radial(rng, row, rating=20, curve="C", line=4.0, cpc=2.5, load="other", ze=ze, rcd=False)
            row.update({"phases": "3", "description": "Workshop 3-phase", "design_current_a": "16",
                        "cable_type": "multicore"})
        elif kind == 0:
            _ring(rng, row, ze).update({"description": "Sockets ring"})
        elif kind == 1:
            _radial(rng, row, rating=6, curve="B", line=1.5, cpc=1.0, load="lighting", ze=ze,
                    rcd=False).update({"description": "Lights"})
        elif kind == 2:
            _radial(rng, row, rating=32, curve="B", line=6.0, cpc=2.5, load="other", ze=ze,
                    rcd=False).update({"description": "Cooker"})
        else:
            _radial(rng, row, rating=16, curve="B", line=2.5, cpc=1.5, load="other", ze=ze,
                    rcd=True).update({"description": "Radial sockets", "socket_outlets": "yes"})
        yield row
    sub_ze = ze + 0.029
    for n in range(1, circuits + 1):
        row = _common(rng, sub, n, "TN-C-S")
        row["board_fed_from"] = f"{main}/1"
        if n % 3 == 0:
            _ring(rng, row, sub_ze)
        else:
            _radial(rng, row, rating=10, curve="B", line=1.5, cpc=1.0, load="lighting", ze=sub_ze,
                    rcd=n % 2 == 0)
        yield row
    ra = round(rng.uniform(20, 220), 1)
    for n in range(1, circuits + 1):
        row = _common(rng, tt, n, "TT")
        row["ra_ohm"] = f"{ra}"
        _radial(rng, row, rating=16 if n % 2 else 20, curve="B", line=2.5, cpc=1.5, load="other",
                ze=ra, rcd=True)
        row["zs_ohm"] = f"{round(ra + float(row['r1_r2_ohm']), 2)}"
        yield row


def rows(count: int, seed: int = 11, circuits_per_board: int = 20) -> Iterator[Row]:
    """Exactly ``count`` rows, board after board (grouped by board, origin boards first)."""
    rng = random.Random(seed)
    made = group = 0
    while made < count:
        for row in board_rows(group, rng, circuits_per_board):
            yield row
            made += 1
            if made == count:
                return
        group += 1


def records(count: int, seed: int = 11) -> list[CircuitRecord]:
    """``count`` records built from :func:`rows` (the engine benchmark's input)."""
    out: list[CircuitRecord] = []
    for row in rows(count, seed):
        record, errors = build_record(row)
        assert record is not None and not errors, errors
        out.append(record)
    return out


def _cell(text: str) -> str:
    return f'"{text}"' if "," in text else text


def csv_lines(count: int, seed: int = 11) -> Iterator[str]:
    """The rows as a wide CSV in the neutral layout (header first), one line at a time."""
    yield ",".join(COLUMNS) + "\n"
    for row in rows(count, seed):
        yield ",".join(_cell(row.get(name, "")) for name in COLUMNS) + "\n"
