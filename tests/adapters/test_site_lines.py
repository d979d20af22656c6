"""The lines format states installation and board facts: each new line form, its context rule, its errors.

The readings are invented transport payload (an invented site); what is
checked is which record each line's values reach, never a limit of the wiring
regulations.
"""

from __future__ import annotations

import io

from adapters import (
    AdapterOptions,
    BoardFacts,
    Fragment,
    InputWarning,
    InstallationFacts,
    LineError,
    Skipped,
    collect,
)
from adapters.lines_adapter import LinesAdapter
from engine import Reading, board_to_dict, installation_to_dict, record_to_dict


def _read(data: bytes, **options: object) -> list[object]:
    return list(LinesAdapter().read(io.BytesIO(data), AdapterOptions(**options)))  # type: ignore[arg-type]


def _kinds(results: list[object]) -> list[tuple[str, int]]:
    return [(type(r).__name__, r.line) for r in results]  # type: ignore[attr-defined]


def test_installation_line_states_the_installation_and_leaves_the_context() -> None:
    """'installation …' pairs are the installation's facts (TN-C-S (PME) read as TN-C-S, PFC in kA);
    the board and circuit in force before it stay in force after it."""
    data = (b"board=DB1 circuit=1 zs=0.5\n"
            b'installation earthing="TN-C-S (PME)" ze=0.21 pfc=1.9kA supply=public\n'
            b"r1+r2=0.3\n")
    results = _read(data)
    assert _kinds(results) == [("Fragment", 1), ("InstallationFacts", 2), ("Fragment", 3)]
    got = collect(results)
    assert got.installation is not None
    assert installation_to_dict(got.installation) == {"earthing": "TN-C-S", "supply": "public",
                                                       "ze_ohm": 0.21, "pfc_ka": 1.9}
    assert [record_to_dict(r) for r in got.records] == [
        {"board": "DB1", "circuit": "1", "r1_r2_ohm": 0.3, "zs_ohm": 0.5}]


def test_a_board_line_states_facts_and_sets_the_board() -> None:
    """A line naming a board and no circuit, with facts, states that board's facts (Zdb, PFC at the
    board, what feeds it) and sets the board for the lines after it, as a context line does."""
    data = b"board=DB2 zdb=0.41 pfc=0.9kA fed_from=DB1/5 location=Garage\ncircuit=3 zs=0.82\n"
    results = _read(data)
    assert _kinds(results) == [("BoardFacts", 1), ("Fragment", 2)]
    facts = results[0]
    assert isinstance(facts, BoardFacts) and facts.board == "DB2"
    got = collect(results)
    assert [board_to_dict(b) for b in got.boards] == [
        {"board": "DB2", "location": "Garage", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.9}]
    assert [r.key for r in got.records] == [("DB2", "3")]


def test_a_board_alone_still_only_sets_the_context() -> None:
    """'board=DB2' alone states nothing: it sets the board (forgetting the circuit), as it always did."""
    results = _read(b"board=DB1 circuit=4\nboard=DB2\nzs=0.5\ncircuit=1 zs=0.6\n")
    assert _kinds(results) == [("Skipped", 1), ("Skipped", 2), ("LineError", 3), ("Fragment", 4)]
    assert [r.reason for r in results if isinstance(r, Skipped)] == ["context", "context"]
    got = collect(results)
    assert got.boards == [] and [r.key for r in got.records] == [("DB2", "1")]


def test_a_board_line_keeps_the_circuit_of_the_same_board() -> None:
    """Board facts stated between two readings of DB2/4 leave DB2/4 in force (a new board would not)."""
    results = _read(b"board=DB2 circuit=4 zs=0.8\nboard=DB2 zdb=0.41\nr1+r2=0.3\nboard=DB3 zdb=0.5\nzs=1\n")
    assert _kinds(results) == [("Fragment", 1), ("BoardFacts", 2), ("Fragment", 3), ("BoardFacts", 4),
                               ("LineError", 5)]
    assert [(f.board, f.circuit) for f in results if isinstance(f, Fragment)] == [("DB2", "4"), ("DB2", "4")]
    assert [(e.code, e.field) for e in results if isinstance(e, LineError)] == [("missing_key", "circuit")]


def test_directives_and_board_lines_share_one_context() -> None:
    """A '#% board=… circuit=…' directive (what capture prepends to a batch) and a board line after it
    follow the same rule: the board line states facts for its own board and sets it."""
    data = (b'#% board=DB1 circuit=2 decimal=""\nboard=DB1 zdb=0,3\n'
            b"#% decimal=comma\nboard=DB1 zdb=0,3\nzs=0,5\n")
    results = _read(data)
    assert _kinds(results) == [("Skipped", 1), ("BoardFacts", 2), ("LineError", 2), ("Skipped", 3),
                               ("BoardFacts", 4), ("Fragment", 5)]
    first, second = [r for r in results if isinstance(r, BoardFacts)]
    assert dict(first.rejected) == {"zdb_ohm": "0,3"}  # a comma not declared: refused, remembered
    assert second.fields["zdb_ohm"] == Reading(value=0.3, text="0,3")
    (fragment,) = [r for r in results if isinstance(r, Fragment)]
    assert fragment.key == ("DB1", "2")
    (board,) = collect(results).boards
    assert board.zdb_ohm is not None and board.zdb_ohm.value == 0.3 and dict(board.rejected) == {}


def test_names_of_another_record_are_warnings_and_never_moved() -> None:
    """A circuit reading on a board line, a board fact on a circuit line, Ze on a board line (a board's
    is Zdb) and a board on an installation line are each read as no field of that line's record: a
    warning saying where it belongs; the rest of the line is taken; nothing moves to another record."""
    data = (b"board=DB2 zs=0.3 pfc=0.9kA\n"
            b"board=DB2 circuit=1 zdb=0.41 zs=0.8\n"
            b"board=DB2 ze=0.2 zdb=0.4\n"
            b"installation board=DB1 earthing=TT\n")
    results = _read(data)
    warnings = [(w.line, w.code, w.column, w.field) for w in results if isinstance(w, InputWarning)]
    assert warnings == [(1, "other_scope", "zs", "zs_ohm"), (2, "other_scope", "zdb", "zdb_ohm"),
                        (3, "other_scope", "ze", "ze_ohm"), (4, "other_scope", "board", "board")]
    hint = next(w.reason for w in results if isinstance(w, InputWarning) and w.column == "ze")
    assert "Zdb" in hint
    got = collect(results)
    assert [record_to_dict(r) for r in got.records] == [{"board": "DB2", "circuit": "1", "zs_ohm": 0.8}]
    assert [board_to_dict(b) for b in got.boards] == [{"board": "DB2", "zdb_ohm": 0.4, "pfc_ka": 0.9}]
    assert got.installation is not None and got.installation.earthing == "TT"


def test_board_and_installation_facts_remember_refusals_and_marks() -> None:
    """A refused board fact is an error and remembered; LIM (not tested) and N/A are remembered as
    marks, never a value; a later valid value clears a refusal."""
    data = (b"board=DB2 zdb=2kA pfc=LIM\n"
            b"installation ze=N/A pfc=LIM\n"
            b"board=DB2 zdb=0.41\n")
    results = _read(data)
    assert [(e.line, e.code, e.field) for e in results if isinstance(e, LineError)] == [
        (1, "bad_value", "zdb_ohm")]
    got = collect(results)
    (board,) = got.boards
    assert board_to_dict(board) == {"board": "DB2", "zdb_ohm": 0.41, "marks": {"pfc_ka": "LIM"}}
    assert got.installation is not None
    assert installation_to_dict(got.installation) == {"marks": {"ze_ohm": "N/A", "pfc_ka": "LIM"}}


def test_new_line_forms_and_their_errors() -> None:
    """An installation line with no facts is skipped; with a syntax error it is bad_syntax; a board
    line whose board is empty or given twice is missing_key; 'installations=…' is no installation line
    (an unknown key); the word is read in any case."""
    data = (b"installation\n"
            b"installation earthing TT\n"
            b'board="" zdb=0.4\n'
            b"board=DB1 DB=DB2 zdb=0.4\n"
            b"installations=1 board=DB1 circuit=1 zs=1\n"
            b"INSTALLATION supply=private\n")
    results = _read(data)
    assert _kinds(results) == [("Skipped", 1), ("LineError", 2), ("LineError", 3), ("LineError", 4),
                               ("LineError", 4), ("Fragment", 5), ("InputWarning", 5),
                               ("InstallationFacts", 6)]
    codes = [(e.line, e.code) for e in results if isinstance(e, LineError)]
    assert codes == [(2, "bad_syntax"), (3, "missing_key"), (4, "duplicate_field"), (4, "missing_key")]
    assert collect(results).lines == 6


def test_installation_line_under_a_regex_profile() -> None:
    """A regex profile reads its logger's circuit lines; an installation line (recognised before the
    profile, as a directive is) still states the installation's facts in our own format."""
    data = b"installation earthing=TT ra=62\nDB1.3 LP:820 CT:410\n"
    got = collect(_read(data, profile="example-logger-regex"))
    assert got.errors == []
    assert got.installation is not None and installation_to_dict(got.installation) == {
        "earthing": "TT", "ra_ohm": 62.0}
    assert [(r.key, r.zs_ohm.value if r.zs_ohm else None) for r in got.records] == [(("DB1", "3"), 0.82)]


def test_installation_line_under_a_lines_profile_and_a_checksum() -> None:
    """Installation and board lines work under a 'lines' profile (its key names and decimal commas)
    and carry a checksum like any line."""
    from adapters.line_format import append_checksum

    line = append_checksum("installation earthing=TT").encode()
    data = line + b"\nboard=DB1 Schleife=0,9 zdb=0,35\n"
    results = _read(data, profile="example-lines-decimal-comma")
    got = collect(results)
    assert got.errors == []
    assert got.installation is not None and got.installation.earthing == "TT"
    assert [board_to_dict(b) for b in got.boards] == [{"board": "DB1", "zdb_ohm": 0.35}]
    assert [(w.code, w.column) for w in got.warnings] == [("other_scope", "Schleife")]


def test_facts_count_for_their_lines() -> None:
    """Every line is accounted for once: fact lines count like fragments."""
    data = b"installation earthing=TT\nboard=DB1 zdb=0.3\nboard=DB1 circuit=1 zs=0.5\n# end\n"
    results = _read(data)
    assert sum(isinstance(r, InstallationFacts | BoardFacts | Fragment | Skipped) for r in results) == 4
    assert collect(results).lines == 4


def test_the_context_capture_carries_after_fact_lines() -> None:
    """ohmtally capture prepends the context directive its LineReader holds after the spooled lines: a
    board line sets the board (as a context line does) and an installation line leaves it, so the next
    batch starts in the right place."""
    from adapters.line_reader import LineReader

    reader = LineReader()
    for number, text in enumerate([b"board=DB1 circuit=4 zs=0.5", b"board=DB2 zdb=0.41"], start=1):
        list(reader.line(number, text, "utf-8"))
    assert reader.context.directive() == '#% board=DB2 circuit="" decimal=""'
    list(reader.line(3, b"circuit=2 zs=0.6", "utf-8"))
    list(reader.line(4, b"installation earthing=TT", "utf-8"))
    assert reader.context.directive() == '#% board=DB2 circuit=2 decimal=""'
