"""A fixed, varied set of jobs whose full verdicts were recorded from the engine before issue 18's rework.

The engine's full view must say exactly what it said before numbers and text
were separated (issue 18): every key, every sentence, every number. This module
builds the same ~2,000 circuits every time (``random.Random`` with fixed seeds,
no clock, no hypothesis database), in jobs that reach every check id and every
outcome, through the ways a record reaches the engine: loose data through
``build_record`` (units, bounded and over-range readings, ``N/A``, ``LIM``,
``NT``, refused text, trade notation), installation and board records a
circuit inherits from, feeder chains (whole, missing, cyclic), both built-in
rulesets, and values no meter gives (zero, negative, huge).

The data is invented load, not evidence that a rule is right: the golden test
(``test_full_view_golden.py``) only proves the output did not change.

``python -m tests.engine.golden_set`` writes the digests of today's output to
``tests/engine/golden/full_view.json``. Run it only to record an output change
you mean to make, and say so in the commit.
"""

from __future__ import annotations

import hashlib
import json
import random
import sys
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from engine import (
    CircuitRecord,
    Ruleset,
    Site,
    build_record,
    build_site,
    load_builtin,
    ruleset_from_data,
    verify,
)

__all__ = ["GOLDEN", "Job", "canonical", "digest", "jobs", "verdict_digests"]

GOLDEN = Path(__file__).with_name("golden") / "full_view.json"

Row = dict[str, Any]


@dataclass(frozen=True, slots=True, kw_only=True)
class Job:
    name: str
    ruleset: str | Ruleset
    records: tuple[CircuitRecord, ...]
    site: Site | None = None


# --- values, drawn with a few odd ones among the typical ---------------------------------------------

_READING_ODDITIES = ("OL", ">999", "< 0.05", "-0.02", "0", "N/A", "LIM", "NT", "abc", "1e300", "> 2")


def _reading(rng: random.Random, typical: float, spread: float = 0.3, odd: float = 0.06,
             unit: str = "") -> str:
    if rng.random() < odd:
        return rng.choice(_READING_ODDITIES)
    value = round(typical * rng.uniform(1 - spread, 1 + spread), 3)
    if unit == "mΩ" and rng.random() < 0.5:
        return f"{value * 1000:g} mΩ"
    return f"{value:g}"


def _maybe(rng: random.Random, row: Row, name: str, value: Any, keep: float = 0.9) -> None:
    """Set ``name`` unless the draw leaves it out (a schedule with gaps)."""
    if rng.random() < keep:
        row[name] = value


_BREAKERS = ((6, 1.0, 1.0), (10, 1.5, 1.0), (16, 2.5, 1.5), (20, 2.5, 1.5), (32, 6.0, 2.5), (40, 10.0, 4.0),
             (50, 16.0, 6.0))
_FUSES = (("BS 88-2", (16, 32, 63, 100, 160)), ("BS 88-3", (5, 20, 32, 45)), ("BS 3036", (5, 15, 30, 60)),
          ("BS 1362", (3, 13)), ("BS 1361", (20, 45)))


def _insulation(rng: random.Random, row: Row) -> None:
    for name in ("ir_ll_mohm", "ir_le_mohm"):
        roll = rng.random()
        row[name] = (">999" if roll < 0.45 else "OL" if roll < 0.5
                     else f"{rng.choice((0.3, 0.8, 1.5, 3, 50))}" if roll < 0.75
                     else f"{rng.randint(1, 500)}" if roll < 0.95 else rng.choice(("N/A", "LIM", "-1")))
    _maybe(rng, row, "ir_test_v", rng.choice(("500", "500", "500", "250", "1000", "100")), 0.9)


def _rcd(rng: random.Random, row: Row, *, notation: bool) -> None:
    delayed = rng.random() < 0.15
    if notation and rng.random() < 0.5:
        row["rcd"] = rng.choice(("30mA A", "30mA AC", "100mA S", "RCD 300mA S AC", "30mA F", "N/A"))
    else:
        _maybe(rng, row, "rcd_residual_ma", rng.choice(("30", "30", "30", "100", "300", "10")), 0.85)
        _maybe(rng, row, "rcd_type", rng.choice(("A", "AC", "F", "B")), 0.8)
        if delayed:
            row["rcd_delayed"] = "yes"
        elif rng.random() < 0.2:
            row["rcd_delayed"] = "no"
    _maybe(rng, row, "rcd_type_required", rng.choice(("A", "F", "B")), 0.15)
    row["rcd_trip_ms"] = _reading(rng, 200 if delayed else 25, spread=0.9, odd=0.08)
    _maybe(rng, row, "rcd_trip_5x_ms", _reading(rng, 80 if delayed else 15, spread=0.9, odd=0.05), 0.7)
    _maybe(rng, row, "rcd_half_no_trip", "yes" if rng.random() < 0.93 else "no", 0.8)


def _circuit(rng: random.Random, board: str, number: int, earthing: str | None, ze: float,
             *, notation: bool, site: bool) -> Row:
    """One final or distribution circuit of any kind the trade records."""
    row: Row = {"board": board, "circuit": str(number)}
    if earthing is not None and (not site or rng.random() < 0.3):
        row["earthing"] = earthing
    _insulation(rng, row)
    _maybe(rng, row, "polarity_ok", "yes" if rng.random() < 0.95 else "no", 0.92)
    kind = rng.random()
    ring = kind < 0.18
    three_phase = 0.18 <= kind < 0.26
    fuse = 0.26 <= kind < 0.4
    rcbo = not fuse and rng.random() < 0.35
    if fuse:
        standard, ratings = rng.choice(_FUSES)
        rating = rng.choice(ratings)
        line, cpc = rng.choice(((2.5, 1.5), (4.0, 1.5), (6.0, 2.5), (10.0, 4.0), (16.0, 16.0), (25.0, 16.0)))
        if notation and rng.random() < 0.4:
            row["device"] = f"{standard} {rating}A"
        else:
            row.update(device_standard=standard, device_rating_a=str(rating))
            _maybe(rng, row, "device_kind", "fuse", 0.5)
    else:
        rating, line, cpc = (32, 2.5, 1.5) if ring else rng.choice(_BREAKERS)
        curve = rng.choice("BBBCD")
        if notation and rng.random() < 0.4:
            rcbo_text = rcbo and rng.random() < 0.5
            row["device"] = f"RCBO {curve}{rating} 30mA A" if rcbo_text else f"{curve}{rating}"
        else:
            row.update(device_curve=curve, device_rating_a=str(rating))
            _maybe(rng, row, "device_standard", "BS EN 61009" if rcbo else "BS EN 60898", 0.8)
            _maybe(rng, row, "device_kind", "rcbo" if rcbo else "breaker", 0.6)
    if notation and "device" not in row and rng.random() < 0.3:
        row["cable"] = f"{line:g}/{cpc:g}"
    else:
        _maybe(rng, row, "line_mm2", f"{line:g}", 0.92)
        _maybe(rng, row, "cpc_mm2", f"{cpc:g}", 0.9)
    _maybe(rng, row, "cable_type", rng.choice(("twin_and_earth", "twin_and_earth", "multicore", "single_core",
                                               "armoured")), 0.75)
    _maybe(rng, row, "reference_method", rng.choice(("C", "C", "A", "B", "100", "102", "E", "D")), 0.6)
    length = rng.randint(3, 140 if three_phase else 60)
    _maybe(rng, row, "length_m", str(length), 0.8)
    _maybe(rng, row, "design_current_a", f"{rating * rng.uniform(0.4, 1.15):.3g}", 0.55)
    _maybe(rng, row, "device_breaking_ka", rng.choice(("6", "6", "10", "3", "16")), 0.6)
    r_per_m = (18.1 / line + 18.1 / cpc) / 1000
    r1r2 = length * r_per_m * (0.25 if ring else 1.0)
    if ring:
        row.update(circuit_form="ring")
        r1 = length * 18.1 / line / 1000
        row["ring_r1_ohm"] = _reading(rng, r1, 0.05)
        row["ring_rn_ohm"] = _reading(rng, r1, 0.08)
        row["ring_r2_ohm"] = _reading(rng, r1 * line / cpc, 0.08)
        _maybe(rng, row, "socket_outlets", "yes", 0.3)
    elif three_phase:
        row.update(phases="3")
        _maybe(rng, row, "load_type", "other", 0.5)
    else:
        _maybe(rng, row, "circuit_form", "radial", 0.4)
        lighting = rng.random() < 0.35
        _maybe(rng, row, "load_type", "lighting" if lighting else "other", 0.8)
        if not lighting and rng.random() < 0.5:
            row["socket_outlets"] = "yes"
            _maybe(rng, row, "socket_rating_a", rng.choice(("13", "16", "32", "63")), 0.3)
    _maybe(rng, row, "r1_r2_ohm", _reading(rng, r1r2, 0.35, unit="mΩ"), 0.94)
    _maybe(rng, row, "r2_ohm", _reading(rng, r1r2 * line / (line + cpc), 0.3), 0.2)
    _maybe(rng, row, "zs_ohm", _reading(rng, ze + r1r2, 0.25, odd=0.05), 0.9)
    if rcbo or rng.random() < 0.35 or earthing == "TT":
        _rcd(rng, row, notation=notation)
    extras = rng.random()
    if extras < 0.05:
        row["max_disconnection_s"] = rng.choice(("0.2", "0.4", "5", "0"))
    elif extras < 0.1:
        row["device_max_zs_ohm"] = rng.choice(("0.5", "1.2", "2.5", "9"))
    elif extras < 0.14:
        row["test_temp_c"] = rng.choice(("5", "10", "15", "25", "65", "-30"))
    elif extras < 0.17:
        row["insulation_temp_c"] = rng.choice(("90", "90", "50", "70"))
    elif extras < 0.2:
        row["cable_iz_a"] = rng.choice(("20", "27", "40", "60"))
    elif extras < 0.23:
        row.update(ambient_factor=rng.choice(("0.94", "1.3")), grouping_factor=rng.choice(("0.8", "1.2")))
        _maybe(rng, row, "thermal_insulation_factor", "0.5", 0.5)
    elif extras < 0.26:
        row["nominal_voltage_v"] = rng.choice(("110", "55", "400", "1200", "0"))
    elif extras < 0.28:
        row["cable_mv_per_a_m"] = rng.choice(("18", "7.3", "2.8"))
    elif extras < 0.3:
        row["conductor_material"] = "aluminium"
    elif extras < 0.33:
        row.update(outdoor_equipment="yes")
    elif extras < 0.36:
        row.update(concealed_in_wall="yes", premises=rng.choice(("domestic", "other")))
    elif extras < 0.38:
        row["neutral_mm2"] = f"{line / 2:g}"
    elif extras < 0.4:
        row["supply"] = "private"
    if rng.random() < 0.08:  # a field a schedule marks, or a cell an intake refused
        name = rng.choice(("zs_ohm", "r1_r2_ohm", "ze_ohm", "device_rating_a", "line_mm2", "earthing",
                           "nominal_voltage_v", "test_temp_c", "cpc_mm2", "rcd_residual_ma", "ra_ohm"))
        row[name] = rng.choice(("N/A", "LIM", "NT", "junk", "-5"))
    if not site and rng.random() < 0.3:
        row["ze_ohm"] = _reading(rng, ze, 0.1, odd=0.03)
    return row


def _board_rows(rng: random.Random, group: int, count: int, *, notation: bool, site: bool,
                ruleset_tt: bool) -> Iterator[Row]:
    main, sub, tt = f"G{group}-DB1", f"G{group}-DB2", f"G{group}-TT"
    ze = round(rng.uniform(0.08, 0.9), 2)
    earthing = rng.choice(("TN-C-S", "TN-C-S", "TN-S", None))
    for n in range(1, count + 1):
        if n == 1:  # the distribution circuit feeding the sub-board
            row: Row = {"board": main, "circuit": "1", "circuit_role": "distribution", "description": "Feed",
                        "device_standard": "BS 88-2", "device_rating_a": "63", "line_mm2": "16",
                        "cpc_mm2": "16", "cable_type": "multicore", "reference_method": "C",
                        "length_m": str(rng.randint(10, 60)), "design_current_a": "45",
                        "r1_r2_ohm": _reading(rng, 0.03, 0.3, odd=0.05), "zs_ohm": f"{ze + 0.03:.3f}"}
            if earthing:
                row["earthing"] = earthing
            if not site:
                row["ze_ohm"] = f"{ze}"
                row["pfc_ka"] = _reading(rng, 1.6, 0.5, odd=0.05)
            if rng.random() < 0.1:
                row.pop("length_m")
            yield row
            continue
        row = _circuit(rng, main, n, earthing, ze, notation=notation, site=site)
        if not site and rng.random() < 0.6:
            row["pfc_ka"] = _reading(rng, rng.choice((1.6, 1.6, 1.6, 9.0, 14.0, 25.0)), 0.6, odd=0.05)
        yield row
    feed = rng.random()
    fed_from = f"{main}/1" if feed < 0.85 else (f"{main}/99" if feed < 0.92 else f"{sub}/3")
    for n in range(1, count + 1):
        row = _circuit(rng, sub, n, earthing, ze + 0.03, notation=notation, site=site)
        if not site or rng.random() < 0.2:
            row["board_fed_from"] = fed_from
        yield row
    ra = round(rng.uniform(8, 260), 1)
    for n in range(1, max(2, count // 2) + 1):
        row = _circuit(rng, tt, n, "TT", ra, notation=notation, site=site)
        row["earthing"] = "TT"
        if not site or rng.random() < 0.3:
            row["ra_ohm"] = _reading(rng, ra, 0.05, odd=0.05)
        if ruleset_tt and rng.random() < 0.2:
            row["ze_ohm"] = _reading(rng, ra + 0.3, 0.05)
        yield row


def _site_document(rng: random.Random, groups: int) -> dict[str, Any]:
    installation: Row = {"earthing": rng.choice(("TN-C-S", "TN-S", "TT")),
                         "ze_ohm": _reading(rng, 0.3, 0.5, 0.05), "pfc_ka": _reading(rng, 1.5, 0.5, 0.05)}
    _maybe(rng, installation, "nominal_voltage_v", rng.choice(("230", "230", "240")), 0.5)
    _maybe(rng, installation, "test_temp_c", rng.choice(("15", "20", "12")), 0.4)
    _maybe(rng, installation, "premises", rng.choice(("domestic", "other")), 0.5)
    _maybe(rng, installation, "ra_ohm", _reading(rng, 60, 0.5), 0.2)
    boards: list[Row] = []
    for group in range(groups):
        main, sub, tt = f"G{group}-DB1", f"G{group}-DB2", f"G{group}-TT"
        boards.append({"board": main, "location": "intake"})
        board: Row = {"board": sub, "board_fed_from": f"{main}/1"}
        _maybe(rng, board, "zdb_ohm", _reading(rng, 0.35, 0.4, odd=0.08), 0.8)
        _maybe(rng, board, "pfc_ka", _reading(rng, 1.0, 0.4, odd=0.05), 0.6)
        boards.append(board)
        boards.append({"board": tt, "board_fed_from": f"{sub}/2", "earthing": "TT",
                       "ra_ohm": _reading(rng, 80, 0.6, odd=0.05)})
    return {"installation": installation, "boards": boards}


def _records(rows: Iterator[Row]) -> tuple[CircuitRecord, ...]:
    out = []
    for row in rows:
        record, _errors = build_record(row)
        if record is not None:
            out.append(record)
    return tuple(out)


def _partial_ruleset() -> Ruleset:
    """A local ruleset with no base that lacks sections and values a check needs: errors, never passes."""
    base = load_builtin("bs7671-2018-a2").as_dict()
    keep = ("defaults", "temperature", "conductors", "insulation", "polarity", "breakers", "disconnection")
    sections = {name: {key: {k: v for k, v in entry.items() if k != "marker_meaning"}
                       for key, entry in base["sections"][name].items()} for name in keep}
    sections["max_zs"] = {"voltage_factor": {"value": 0.95, "source": "a local code (test)"}}
    sections["rcd"] = {"general_max_ms_at_idn": {"value": 300, "source": "a local code (test)"}}
    return ruleset_from_data({"id": "local-partial", "title": "local, partial", "sections": sections})


def jobs() -> list[Job]:
    """The jobs, always the same: ~2,000 circuits over both rulesets, with and without a site."""
    out: list[Job] = []
    plan = [("bs-plain", "bs7671-2018-a2", 11, False, False, 10),
            ("bs-notation", "bs7671-2018-a2", 12, True, False, 8),
            ("bs-site", "bs7671-2018-a2", 13, True, True, 8),
            ("iec-plain", "iec-60364", 14, False, False, 8),
            ("iec-site", "iec-60364", 15, True, True, 6),
            ("bs-more", "bs7671-2018-a2", 16, True, False, 6),
            ("partial-ruleset", "local-partial", 17, True, False, 3)]
    for name, ruleset, seed, notation, with_site, groups in plan:
        rng = random.Random(seed)
        rows: list[Row] = []
        for group in range(groups):
            rows.extend(_board_rows(rng, group, 16, notation=notation, site=with_site,
                                    ruleset_tt=not with_site))
        site = None
        if with_site:
            site, _errors = build_site(_site_document(rng, groups))
        rules = _partial_ruleset() if ruleset == "local-partial" else ruleset
        out.append(Job(name=name, ruleset=rules, records=_records(iter(rows)), site=site))
    return out


# --- the digests --------------------------------------------------------------------------------------

def canonical(data: Any) -> str:
    """One text for one answer, keys in the answer's own order (the order is part of what is recorded):
    the standard library's float repr, no ASCII escapes."""
    return json.dumps(data, ensure_ascii=False, separators=(",", ":"), allow_nan=False)


def digest(data: Any) -> str:
    return hashlib.sha256(canonical(data).encode()).hexdigest()[:20]


def verdict_digests(verdicts: list[dict[str, Any]]) -> list[str]:
    return [digest(v) for v in verdicts]


def _record_golden() -> dict[str, Any]:
    out: dict[str, Any] = {}
    for job in jobs():
        verdicts = [v.as_dict() for v in verify(job.records, job.ruleset, site=job.site)]
        out[job.name] = {"circuits": len(verdicts), "digests": verdict_digests(verdicts)}
    return out


def main() -> int:
    GOLDEN.parent.mkdir(exist_ok=True)
    GOLDEN.write_text(json.dumps(_record_golden(), indent=0) + "\n", encoding="utf-8")
    print(f"wrote {GOLDEN}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
