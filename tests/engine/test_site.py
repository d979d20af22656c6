"""Installation and board records: built like circuit records, errors as values, and they round-trip."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from engine import (
    BOARD_FIELDS,
    FIELDS,
    INSTALLATION_FIELDS,
    BoardRecord,
    InstallationRecord,
    MarkedCell,
    Reading,
    ReadingError,
    Site,
    board_to_dict,
    build_board,
    build_installation,
    build_site,
    coerce_site_field,
    installation_to_dict,
)
from engine.site import BOARD_TO_CIRCUIT, INSTALLATION_TO_CIRCUIT


def test_installation_fields_are_built_like_circuit_fields() -> None:
    """The same text gives the same value as in a circuit record (one coercion rule for every intake)."""
    record, errors = build_installation({"earthing": "TN-C-S (PME)", "nominal_voltage_v": "230 V",
                                         "supply": "public", "ze_ohm": "210 mΩ", "pfc_ka": "1.9 kA",
                                         "premises": "dwelling", "test_temp_c": "18 °C",
                                         "conductor_material": "Cu"})
    assert errors == []
    assert record == InstallationRecord(earthing="TN-C-S", nominal_voltage_v=230.0, supply="public",
                                        ze_ohm=Reading(value=0.21, text="210 mΩ"),
                                        pfc_ka=Reading(value=1.9, text="1.9 kA"), premises="domestic",
                                        test_temp_c=18.0, conductor_material="copper")


def test_a_bad_board_value_is_an_error_remembered_and_the_rest_kept() -> None:
    """A refused Zdb is a FieldError and stays in rejected; the good fields beside it are kept."""
    board, errors = build_board({"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": "0,41",
                                 "pfc_ka": "0.9", "colour": "grey"})
    assert board is not None
    assert board.board_fed_from == "DB1/5" and board.pfc_ka == Reading(value=0.9, text="0.9")
    assert board.zdb_ohm is None and board.rejected == {"zdb_ohm": "0,41"}
    assert [(e.field, e.code) for e in errors] == [("zdb_ohm", "bad_value"), ("colour", "unknown_field")]


def test_a_board_without_its_reference_is_not_built() -> None:
    """board is the key: without it there is no record, and the error says so."""
    board, errors = build_board({"zdb_ohm": 0.41})
    assert board is None and [(e.field, e.code) for e in errors] == [("board", "missing_key")]


def test_na_and_lim_are_marks_on_site_records() -> None:
    """N/A and LIM (and 'not tested') leave the field empty and are remembered as marks."""
    board, errors = build_board({"board": "DB3", "zdb_ohm": "LIM", "pfc_ka": "N/A", "ra_ohm": "NT"})
    assert errors == [] and board is not None
    assert board.zdb_ohm is None and board.pfc_ka is None and board.ra_ohm is None
    assert board.marks == {"zdb_ohm": "LIM", "pfc_ka": "N/A", "ra_ohm": "LIM"}


@pytest.mark.parametrize("data", [
    {"board": "DB2", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9},
    {"board": "DB3", "board_fed_from": "DB2/4", "earthing": "TT", "ra_ohm": "> 200", "phases": 3,
     "location": "garden office", "description": "outbuilding", "nominal_voltage_v": 230},
    {"board": "DB4", "zdb_ohm": "OL", "marks": {"pfc_ka": "LIM"}, "rejected": {"ra_ohm": "sixty"}},
])
def test_board_records_round_trip(data: dict[str, object]) -> None:
    """build_board(board_to_dict(b)) gives b back (a reading's value and relation; its text is the
    written form), marks and refused text included."""
    board, errors = build_board(data)
    assert errors == [] and board is not None
    again, errors = build_board(board_to_dict(board))
    assert errors == [] and again is not None and board_to_dict(again) == board_to_dict(board)
    for name in BOARD_FIELDS:
        value, back = getattr(board, name), getattr(again, name)
        if isinstance(value, Reading):
            assert (back.value, back.relation) == (value.value, value.relation)
        else:
            assert back == value
    assert (again.marks, again.rejected) == (board.marks, board.rejected)


def test_installation_round_trips_with_marks_and_rejections() -> None:
    """installation_to_dict → build_installation gives the same record."""
    record, _ = build_installation({"earthing": "TT", "ra_ohm": 62, "ze_ohm": "x", "pfc_ka": "LIM"})
    again, errors = build_installation(installation_to_dict(record))
    assert errors == [] and again == record
    assert installation_to_dict(record) == {"earthing": "TT", "ra_ohm": 62.0, "marks": {"pfc_ka": "LIM"},
                                            "rejected": {"ze_ohm": "x"}}


_READING_TEXT = st.one_of(st.floats(min_value=-10, max_value=1e4, allow_nan=False).map(lambda v: round(v, 4)),
                          st.sampled_from(["OL", "> 200", "< 0.01", "0.41 Ω", "N/A", "LIM", "-", "x"]))


@given(zdb=_READING_TEXT, pfc=_READING_TEXT, earthing=st.sampled_from(["TT", "TN-S", "PME", "LIM", "?"]))
def test_any_board_round_trips(zdb: object, pfc: object, earthing: str) -> None:
    """Whatever a board record was built from, writing it out and reading it back gives it again."""
    board, _ = build_board({"board": "DB1", "zdb_ohm": zdb, "pfc_ka": pfc, "earthing": earthing})
    assert board is not None
    again, errors = build_board(board_to_dict(board))
    assert errors == [] and again is not None and board_to_dict(again) == board_to_dict(board)


def test_coerce_site_field_is_the_per_cell_rule() -> None:
    """Per cell: a typed value, None for blank and N/A, MarkedCell for LIM, ReadingError for bad or
    unknown names."""
    assert coerce_site_field("board", "zdb_ohm", "410 mΩ") == Reading(value=0.41, text="410 mΩ")
    assert coerce_site_field("installation", "ze_ohm", "0,21", decimal_comma=True) == \
        Reading(value=0.21, text="0,21")
    assert coerce_site_field("board", "pfc_ka", "N/A") is None
    assert coerce_site_field("board", "earthing", "") is None
    with pytest.raises(MarkedCell) as marked:
        coerce_site_field("board", "zdb_ohm", "LIM")
    assert marked.value.mark == "LIM" and marked.value.code == "limitation"
    for scope, name, raw in [("board", "zdb_ohm", "2 kA"), ("board", "ze_ohm", 1),
                             ("installation", "zdb_ohm", 1), ("circuit", "zs_ohm", 1)]:
        with pytest.raises(ReadingError):
            coerce_site_field(scope, name, raw)  # type: ignore[arg-type]


def test_build_site_points_at_each_error() -> None:
    """Errors of a site document carry a JSON pointer (RFC 6901) into it; a repeated board is said."""
    site, errors = build_site({
        "installation": {"earthing": "TN-C-S", "ze_ohm": "zero"},
        "boards": [{"board": "DB2", "zdb_ohm": 0.41}, {"zdb_ohm": 1}, "DB9",
                   {"board": "DB2", "zdb_ohm": 0.43, "a/b": 1}],
        "circuits": [{"board": "DB2", "circuit": "1"}],
    })
    assert [(e.pointer, e.error.code) for e in errors] == [
        ("/installation/ze_ohm", "bad_value"), ("/boards/1/board", "missing_key"), ("/boards/2", "bad_value"),
        ("/boards/3/a~1b", "unknown_field"), ("/boards/3/board", "duplicate_board")]
    assert site.installation is not None and site.installation.rejected == {"ze_ohm": "zero"}
    assert list(site.boards) == ["DB2"] and site.boards["DB2"].zdb_ohm == Reading(value=0.43)


def test_site_files_each_board_under_its_own_reference() -> None:
    """A Site cannot hold a board under another board's name; Site.of keys them itself."""
    with pytest.raises(ValueError):
        Site(boards={"DB1": BoardRecord(board="DB2")})
    site = Site.of(None, [BoardRecord(board="DB1"), BoardRecord(board="DB2")])
    assert list(site.boards) == ["DB1", "DB2"]


def test_inherited_fields_land_on_circuit_fields_of_the_same_kind() -> None:
    """Each board or installation field a circuit inherits maps onto a circuit field of the same kind
    and unit; phases is never inherited (a three-phase board feeds single-phase circuits)."""
    for table, mapping in ((BOARD_FIELDS, BOARD_TO_CIRCUIT), (INSTALLATION_FIELDS, INSTALLATION_TO_CIRCUIT)):
        for site_field, circuit_field in mapping.items():
            assert table[site_field].kind == FIELDS[circuit_field].kind
            assert table[site_field].unit == FIELDS[circuit_field].unit
    assert "phases" not in BOARD_TO_CIRCUIT and "phases" not in INSTALLATION_TO_CIRCUIT
