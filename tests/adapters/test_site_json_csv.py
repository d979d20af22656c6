"""Installation and board facts in JSON (site documents, streamed) and CSV (board and installation sheets).

The readings are invented transport payload (an invented site); what is
checked is which record each value reaches and what is said where it cannot.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import pytest

from adapters import (
    AdapterError,
    AdapterOptions,
    BoardFacts,
    Fragment,
    InputWarning,
    InstallationFacts,
    LineError,
    SiteFacts,
    collect,
    iter_records,
)
from adapters.csv_adapter import CsvAdapter
from adapters.json_adapter import JsonAdapter
from engine import board_to_dict, installation_to_dict, record_to_dict


def _json(data: bytes) -> list[object]:
    return list(JsonAdapter().read(io.BytesIO(data), AdapterOptions()))


def _csv(data: bytes, **options: object) -> list[object]:
    return list(CsvAdapter().read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


SITE = {"ruleset": "bs7671-2018-a2",
        "installation": {"earthing": "TN-C-S (PME)", "ze_ohm": 0.21, "pfc_ka": "1.9 kA"},
        "boards": [{"board": "DB1", "zdb_ohm": 0.21, "location": "Hall"},
                   {"board": "DB2", "board_fed_from": "DB1/5", "Zdb": "410 mΩ", "pfc_ka": 0.9}],
        "circuits": [{"board": "DB2", "circuit": "1", "device": "B32", "zs_ohm": 0.95}]}


def test_site_document_is_streamed_part_by_part() -> None:
    """A site document gives the installation's facts, each board's facts and each circuit, with the
    line each starts on and pointers into the document; 'ruleset' is left to the caller."""
    results = _json(json.dumps(SITE, indent=1).encode())
    assert [type(r).__name__ for r in results] == ["InstallationFacts", "BoardFacts", "BoardFacts",
                                                   "Fragment"]
    got = collect(results)
    assert got.errors == [] and got.warnings == []
    assert got.installation is not None
    assert installation_to_dict(got.installation) == {"earthing": "TN-C-S", "ze_ohm": 0.21, "pfc_ka": 1.9}
    assert [board_to_dict(b) for b in got.boards] == [
        {"board": "DB1", "location": "Hall", "zdb_ohm": 0.21},
        {"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9}]
    assert [record_to_dict(r) for r in got.records] == [
        {"board": "DB2", "circuit": "1", "zs_ohm": 0.95, "device": "B32"}]
    assert set(got.site.boards) == {"DB1", "DB2"}


def test_site_parts_as_list_elements_and_ndjson_lines() -> None:
    """A logger may send the installation's or a board's facts between readings, as an element of a
    list or a line of NDJSON; an NDJSON input whose first line is such a document is read to its end."""
    lines = [{"installation": {"earthing": "TT"}},
             {"board": "DB1", "circuit": "1", "zs": 0.5},
             {"boards": [{"board": "DB1", "zdb": 0.3}], "note": "x"}]
    for text in ("\n".join(json.dumps(x) for x in lines), json.dumps(lines)):
        got = collect(_json(text.encode()))
        assert got.errors == []
        assert got.installation is not None and got.installation.earthing == "TT"
        assert [board_to_dict(b) for b in got.boards] == [{"board": "DB1", "zdb_ohm": 0.3}]
        assert [r.key for r in got.records] == [("DB1", "1")]
        assert [(w.code, w.column) for w in got.warnings] == [("unknown_field", "note")]


def test_json_site_errors_point_into_the_document() -> None:
    """A board without 'board', a board that is no object, 'boards' that is no list, a circuit record
    without a circuit (never read as a board's facts) and a board fact in a circuit: each said with
    its pointer; the good parts are kept."""
    doc = {"boards": [{"zdb_ohm": 0.3}, 7, {"board": "DB2", "zdb_ohm": 0.4}],
           "circuits": [{"board": "DB2", "zdb_ohm": 0.5, "pfc_ka": 0.9},
                        {"board": "DB2", "circuit": "1", "zdb_ohm": 0.5}]}
    results = _json(json.dumps(doc).encode())
    assert [(e.code, e.pointer) for e in results if isinstance(e, LineError)] == [
        ("missing_key", "/boards/0/board"), ("bad_record", "/boards/1"),
        ("missing_key", "/circuits/0/circuit")]
    assert [(w.code, w.pointer) for w in results if isinstance(w, InputWarning)] == [
        ("other_scope", "/circuits/0/zdb_ohm")]
    got = collect(results)
    assert [board_to_dict(b) for b in got.boards] == [{"board": "DB2", "zdb_ohm": 0.4}]
    assert [r.key for r in got.records] == [("DB2", "1")]
    bad = _json(b'{"boards": {"board": "DB1"}, "circuits": []}')
    assert [(e.code, e.pointer) for e in bad if isinstance(e, LineError)] == [("bad_document", "/boards")]


def test_board_sheet_found_by_its_columns() -> None:
    """A header with a board column, no circuit column and a column only a board has (Zdb, Location)
    is a sheet of boards: each row one board's facts, units in the header and cells as elsewhere."""
    data = "DB,Fed from,Zdb (Ω),PFC,Location\nDB1,,0.21,1.9 kA,Hall\nDB2,DB1/5,410 mΩ,0.9,Garage\n".encode()
    results = _csv(data)
    assert [type(r).__name__ for r in results] == ["Skipped", "BoardFacts", "BoardFacts"]
    got = collect(results)
    assert [board_to_dict(b) for b in got.boards] == [
        {"board": "DB1", "location": "Hall", "zdb_ohm": 0.21, "pfc_ka": 1.9},
        {"board": "DB2", "location": "Garage", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9}]


def test_installation_sheet_found_by_its_columns() -> None:
    """No board or circuit column and a column only the installation has (Ze at origin): the rows are
    the installation's facts."""
    got = collect(_csv(b"Earthing,Ze at origin,PFC at origin,Supply\nTN-C-S (PME),0.21,1.9,public\n"))
    assert got.errors == [] and got.installation is not None
    assert installation_to_dict(got.installation) == {"earthing": "TN-C-S", "supply": "public",
                                                       "ze_ohm": 0.21, "pfc_ka": 1.9}


@pytest.mark.parametrize("header", [b"DB,PFC\nDB1,1.9\n", b"Earthing,Ze\nTT,0.3\n",
                                    b"DB,Zs,Zdb\nDB1,0.4,0.3\n"])
def test_columns_a_circuit_sheet_also_has_never_make_a_facts_sheet(header: bytes) -> None:
    """'DB,PFC' may be a circuit sheet missing its circuit column: a circuit's PFC read as its board's
    would be inherited by every circuit on the board, so the header is refused, saying how to state
    board or installation facts (a column only they have, or a profile's scope)."""
    results = _csv(header)
    (error,) = [r for r in results if isinstance(r, LineError)]
    assert error.code == "unrecognised_header" and "scope" in error.reason
    assert not any(isinstance(r, BoardFacts | InstallationFacts | Fragment) for r in results)


def _profile(tmp_path: Path, doc: dict[str, object]) -> str:
    (tmp_path / f"{doc['name']}.json").write_text(json.dumps(doc), encoding="utf-8")
    return str(tmp_path)


def test_profile_scope_boards_and_installation(tmp_path: Path) -> None:
    """A csv profile's "scope" says what each row is; its columns and defaults are that record's
    fields; a long layout works the same way."""
    folder = _profile(tmp_path, {"name": "site-boards", "kind": "csv", "scope": "boards",
                                 "columns": {"Dist": "board", "Loop at DB": "zdb_ohm", "Fault": "pfc_ka"},
                                 "defaults": {"earthing": "TN-C-S"}})
    _profile(tmp_path, {"name": "site-origin", "kind": "csv", "scope": "installation", "layout": "long",
                        "columns": {"Item": "test", "Reading": "value"},
                        "tests": {"Ze": "ze_ohm", "PFC": "pfc_ka", "System": "earthing"}})
    boards = collect(_csv(b"Dist,Loop at DB,Fault\nDB1,0.21,1.9\nDB2,0.41,0.9\n", profile="site-boards",
                          profile_dir=folder))
    assert [board_to_dict(b) for b in boards.boards] == [
        {"board": "DB1", "zdb_ohm": 0.21, "pfc_ka": 1.9, "earthing": "TN-C-S"},
        {"board": "DB2", "zdb_ohm": 0.41, "pfc_ka": 0.9, "earthing": "TN-C-S"}]
    origin = collect(_csv(b"Item,Reading\nZe,0.21\nPFC,1.9\nSystem,TT\nZs,0.9\n", profile="site-origin",
                          profile_dir=folder))
    assert origin.installation is not None
    assert installation_to_dict(origin.installation) == {"earthing": "TT", "ze_ohm": 0.21, "pfc_ka": 1.9}
    assert [(e.line, e.code) for e in origin.errors] == [(5, "unknown_test")]
    assert "a circuit's field" in origin.errors[0].reason


@pytest.mark.parametrize(("doc", "pointer"), [
    ({"name": "bad-scope", "scope": "rooms"}, "/scope"),
    ({"name": "bad-target", "scope": "boards", "columns": {"Zs": "zs_ohm"}}, "/columns/Zs/field"),
    ({"name": "bad-default", "scope": "installation", "defaults": {"zdb_ohm": "0.3"}}, "/defaults/zdb_ohm"),
])
def test_profile_scope_is_validated_when_loaded(tmp_path: Path, doc: dict[str, object], pointer: str) -> None:
    """A scope that is none of circuits/boards/installation, or a column or default that is no field of
    the scope's record, is a bad_profile error pointing at it, before any row is read."""
    folder = _profile(tmp_path, doc)
    with pytest.raises(AdapterError) as caught:
        _csv(b"a,b\n1,2\n", profile=str(doc["name"]), profile_dir=folder)
    assert caught.value.code == "bad_profile" and caught.value.details["pointer"] == pointer


def test_a_default_of_another_scope_is_refused_before_the_first_row(tmp_path: Path) -> None:
    """A profile without a scope may give defaults of any record; one that is no field of the sheet's
    rows (a board's Zdb on circuit rows) is refused before the first result."""
    folder = _profile(tmp_path, {"name": "mixed", "kind": "csv", "defaults": {"zdb_ohm": "0.3"}})
    with pytest.raises(AdapterError) as caught:
        _csv(b"DB,Cct,Zs\nDB1,1,0.5\n", profile="mixed", profile_dir=folder)
    assert caught.value.details["pointer"] == "/defaults/zdb_ohm"


def test_iter_records_hands_facts_to_a_site_accumulator() -> None:
    """The streaming merge passes board and installation facts to a SiteFacts (one entry per board),
    whose build gives the same records collect() gives."""
    data = json.dumps(SITE).encode()
    site = SiteFacts()
    records = list(iter_records(_json(data), [], [], site))
    installation, boards = site.build([])
    got = collect(_json(data))
    assert [record_to_dict(r) for r in records] == [record_to_dict(r) for r in got.records]
    assert installation == got.installation and boards == got.boards
