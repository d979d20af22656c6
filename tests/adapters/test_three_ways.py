"""One site, three ways in: a JSON site document, CSV sheets (a board profile), and logger lines with
installation and board lines give the same installation, boards, circuits — and the same verdicts.

The site is invented (the demo's kind of job); what is checked is that the
three formats agree, and that a circuit posted with only what the meter measured
is judged with what its board and the installation recorded once.
"""

from __future__ import annotations

import io
import json
from itertools import chain
from pathlib import Path

from adapters import AdapterOptions, Collected, Result, collect
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from adapters.lines_adapter import LinesAdapter
from engine import board_to_dict, installation_to_dict, load_ruleset, record_to_dict, verify

SITE = {
    "installation": {"earthing": "TN-C-S (PME)", "nominal_voltage_v": 230, "supply": "public",
                     "ze_ohm": 0.21, "pfc_ka": 1.9},
    "boards": [{"board": "DB1", "zdb_ohm": 0.21, "pfc_ka": 1.9, "location": "Hall"},
               {"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9,
                "location": "Garage"}],
    "circuits": [
        {"board": "DB1", "circuit": "5", "description": "Garage sub-main", "circuit_role": "distribution",
         "device": "C32", "cable": "6/2.5", "r1_r2_ohm": 0.18, "zs_ohm": 0.4},
        {"board": "DB2", "circuit": "1", "device": "B32", "cable": "2.5/1.5", "r1_r2_ohm": 0.5,
         "zs_ohm": 0.95, "ir_le_mohm": ">999", "polarity_ok": True},
        {"board": "DB2", "circuit": "2", "device": "B16", "rcd": "30mA A", "zs_ohm": 1.1,
         "rcd_trip_ms": 24, "ir_le_mohm": "LIM"},
    ],
}

LINES = b"""\
# logger file: the installation once, each board once, then the readings
installation earthing="TN-C-S (PME)" U0=230 supply=public ze=0.21 pfc=1.9kA
board=DB1 zdb=0.21 pfc=1.9kA location=Hall
circuit=5 desc="Garage sub-main" circuit_role=distribution device=C32 cable=6/2.5 R1+R2=0.18 zs=0.4
board=DB2 fed_from=DB1/5 zdb=0.41 pfc=0.9kA location=Garage
circuit=1 device=B32 cable=2.5/1.5 R1+R2=0.5 zs=0.95 "IR L-E"=>999 polarity=yes
circuit=2 device=B16 rcd="30mA A" zs=1.1 "RCD ms"=24 "IR L-E"=LIM
"""

CIRCUITS_CSV = """\
DB,Cct,Description,Circuit role,Device,Cable,rcd,R1+R2,Zs (Ω),IR L-E [MΩ],Polarity,RCD ms
DB1,5,Garage sub-main,distribution,C32,6/2.5,,0.18,0.4,,,
DB2,1,,,B32,2.5/1.5,,0.5,0.95,>999,ok,
DB2,2,,,B16,,30mA A,,1.1,LIM,,24
""".encode()
BOARDS_CSV = (b"Dist board,Supplied by,Loop at board,Fault level,Where\n"
              b"DB1,,0.21,1.9,Hall\nDB2,DB1/5,0.41,0.9,Garage\n")
ORIGIN_CSV = b"Earthing,U0,Supply,Ze at origin,PFC at origin\nTN-C-S (PME),230,public,0.21,1.9\n"
BOARD_PROFILE = {"name": "site-boards", "kind": "csv", "scope": "boards",
                 "columns": {"Dist board": "board", "Supplied by": "board_fed_from",
                             "Loop at board": "zdb_ohm", "Fault level": {"field": "pfc_ka", "unit": "kA"},
                             "Where": "location"}}


def _read(adapter: object, data: bytes, **options: object) -> list[Result]:
    return list(adapter.read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[attr-defined]


def _the_three(tmp_path: Path) -> dict[str, Collected]:
    (tmp_path / "site-boards.json").write_text(json.dumps(BOARD_PROFILE), encoding="utf-8")
    sheets = chain(_read(CsvAdapter(), ORIGIN_CSV),
                   _read(CsvAdapter(), BOARDS_CSV, profile="site-boards", profile_dir=str(tmp_path)),
                   _read(CsvAdapter(), CIRCUITS_CSV))
    return {"json": collect(_read(JsonAdapter(), json.dumps(SITE, indent=2).encode())),
            "csv": collect(sheets),
            "lines": collect(_read(LinesAdapter(), LINES))}


def _site(got: Collected) -> tuple[object, ...]:
    return (installation_to_dict(got.installation) if got.installation else None,
            [board_to_dict(b) for b in got.boards], [record_to_dict(r) for r in got.records])


def test_three_ways_in_give_the_same_site(tmp_path: Path) -> None:
    """JSON site document, CSV sheets with a board profile, and logger lines: equal installation, boards
    and circuit records (notation kept, LIM remembered), none with an error or warning."""
    three = _the_three(tmp_path)
    for name, got in three.items():
        assert got.errors == [] and got.warnings == [], name
    expected = _site(three["json"])
    assert _site(three["csv"]) == expected
    assert _site(three["lines"]) == expected
    installation, boards, records = expected
    assert installation == {"earthing": "TN-C-S", "nominal_voltage_v": 230.0, "supply": "public",
                            "ze_ohm": 0.21, "pfc_ka": 1.9}
    assert [b["board"] for b in boards] == ["DB1", "DB2"]  # type: ignore[index]
    assert records[2]["marks"] == {"ir_le_mohm": "LIM"}  # type: ignore[index]


def test_three_ways_in_give_the_same_verdicts(tmp_path: Path) -> None:
    """The verdicts of the three, each verified with its own site, are equal; DB2/1 gave no earthing
    and no Ze, and its verdict says it took the earthing from the installation and its Ze from board
    DB2's Zdb (a sub-board's circuits see its Zdb, never the origin's Ze)."""
    ruleset = load_ruleset(None)
    verdicts = {name: [v.as_dict() for v in verify(got.records, ruleset, site=got.site)]
                for name, got in _the_three(tmp_path).items()}
    assert verdicts["csv"] == verdicts["json"]
    assert verdicts["lines"] == verdicts["json"]
    db2_1 = next(v for v in verdicts["json"] if (v["board"], v["circuit"]) == ("DB2", "1"))
    assert db2_1["inherited"]["earthing"] == "installation"
    assert db2_1["inherited"]["ze_ohm"] == "board DB2"
