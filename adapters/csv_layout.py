"""Reading a CSV header: delimiter, decimal convention, and which column is which field.

Invariants:
- A header is recognised when it names the circuit (and the board, unless a
  profile gives a default board) and is either wide (other columns are fields)
  or long (a test column and a value column). Anything else is ``None`` plus a
  reason, which the adapter turns into ``unrecognised_header`` for that line.
- A sheet's rows are circuits, boards or the installation (``Layout.scope``):
  the profile's ``scope`` says so, else a circuit column makes a circuit
  sheet; a sheet without one is read as boards (with a board column) or as
  the installation (without) only when a column can mean nothing else (Zdb,
  Location, ``PFC at board``, ``Ze at origin``) and every field column is a
  fact of that scope — never a guess from columns a circuit sheet also has,
  since a circuit's PFC read as its board's would be inherited by every
  circuit on it. A column naming a field of another scope is a warning.
- A profile's column names are matched folded (case, spacing, punctuation
  insensitive) and win over the alias table; with ``only_mapped`` the alias
  table is not consulted at all.
- The layout is decided once, from the header; rows then cost list indexing and
  cached cell parses (:class:`adapters.cells.CellParser`).
- Every header cell is accounted for: a field, a key or a long-layout role, or
  a note in ``Layout.notes`` saying why its values are not read (unknown,
  ambiguous, a second column for a field, left out by the profile, a field
  column in a long layout). The adapter reports the notes as warnings on the
  header line.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field

from .aliases import Label, fold, resolve_label, split_header
from .base import InputWarning
from .cells import CellParser
from .name_notes import name_warning
from .profile_schema import LONG_ROLES, SHEET_SCOPES
from .profiles import ColumnSpec, CsvProfile
from .rejections import REJECTED_LABEL
from .scopes import SCOPE_NAMES, Scope, in_scope

__all__ = [
    "Layout",
    "LongTest",
    "detect_decimal_comma",
    "long_test",
    "plan_layout",
    "sniff_delimiter",
    "split_cells",
]

_CANDIDATES = ",;\t|"
_ROLE_LABELS = {
    "test": {"test", "measurement", "quantity", "parameter", "testname", "readingtype"},
    "value": {"value", "reading", "result", "measured", "measuredvalue"},
    "unit": {"unit", "units", "uom"},
}
_COMMA_NUMBER = re.compile(r"^\s*[<>≤≥]?\s*\d+,\d+(?:\s*\D.*)?$")
_POINT_NUMBER = re.compile(r"^\s*[<>≤≥]?\s*\d+\.\d+(?:\s*\D.*)?$")


@dataclass(frozen=True, slots=True)
class LongTest:
    field: str
    unit: str | None
    scale: float


@dataclass(slots=True)
class Layout:
    kind: str  # "wide" or "long"
    board: int | None
    circuit: int | None  # None for a sheet of board or installation facts
    columns: list[tuple[int, str, CellParser]] = field(default_factory=list)  # wide
    test: int = -1  # long
    value: int = -1
    unit: int | None = None
    tests: dict[str, LongTest] = field(default_factory=dict)
    width: int = 0
    notes: list[InputWarning] = field(default_factory=list)  # line 0: the adapter sets the header's
    rejected: int | None = None  # wide: the column carrying refused values (adapters.rejections)
    scope: Scope = "circuit"  # what each row is: a circuit's fields, a board's or the installation's facts


def sniff_delimiter(sample_lines: list[str], declared: str | None) -> str:
    """The declared delimiter, else csv.Sniffer's pick among , ; TAB |, else the most frequent."""
    if declared:
        return declared
    text = "\n".join(sample_lines[:20])
    try:
        return csv.Sniffer().sniff(text, delimiters=_CANDIDATES).delimiter
    except csv.Error:
        head = sample_lines[0] if sample_lines else ""
        counts = {d: head.count(d) for d in _CANDIDATES}
        best = max(counts, key=lambda d: counts[d])
        return best if counts[best] else ","


def split_cells(line: str, delimiter: str) -> list[str]:
    """One physical line's cells; quoted cells go through the csv module."""
    if '"' not in line:
        return line.split(delimiter)
    return next(csv.reader([line], delimiter=delimiter, strict=False), [])


def detect_decimal_comma(rows: list[list[str]], delimiter: str) -> bool:
    """Decimal commas when the delimiter is not a comma and numbers are written 0,82 (none 0.82)."""
    if delimiter == ",":
        return False
    comma = point = 0
    for row in rows:
        for cell in row:
            if _COMMA_NUMBER.match(cell):
                comma += 1
            elif _POINT_NUMBER.match(cell):
                point += 1
    return comma > 0 and point == 0


def _profile_columns(profile: CsvProfile | None) -> dict[str, ColumnSpec]:
    return {fold(c.source): c for c in profile.columns} if profile else {}


def _note(code: str, column: str, reason: str, name: str | None = None) -> InputWarning:
    return InputWarning(line=0, code=code, column=column, field=name, reason=reason)


@dataclass(slots=True)
class _Column:
    index: int
    cell: str
    name: str
    unit: str | None
    scale: float
    scope: str | None  # a label tied to one scope ("PFC at board"), else None


def _classify(header: list[str], profile: CsvProfile | None
              ) -> tuple[list[_Column], dict[str, int], int | None, list[InputWarning]]:
    """Each header cell: a field or key column, a long-layout role, the refused-values column, or a note."""
    mapped = _profile_columns(profile)
    only_mapped = bool(profile and profile.only_mapped)
    columns: list[_Column] = []
    roles: dict[str, int] = {}
    notes: list[InputWarning] = []
    rejected_column: int | None = None
    for index, cell in enumerate(header):
        bare, header_unit = split_header(cell)
        spec = mapped.get(fold(cell)) or mapped.get(fold(bare))
        if spec is not None:
            # the profile's unit, else the one written in the header ("Earth Loop (Ω)")
            unit = spec.unit or (header_unit if fold(cell) not in mapped else None)
            column = _Column(index, cell.strip(), spec.field, unit, spec.scale, None)
        elif fold(cell) == REJECTED_LABEL and not only_mapped:
            if rejected_column is None:
                rejected_column = index
            else:
                notes.append(_note("duplicate_column", cell.strip(),
                                   f"{cell.strip()!r} is a second column of refused values: its values "
                                   "are not read"))
            continue
        elif only_mapped:
            if cell.strip():
                named = profile.name if profile else ""
                notes.append(_note("ignored_column", cell.strip(),
                                   f"{cell.strip()!r} is not mapped by profile {named!r}, which reads "
                                   "only the columns it maps: its values are not read"))
            continue
        else:
            folded = fold(cell)
            role = next((r for r, labels in _ROLE_LABELS.items() if folded in labels), None)
            if role is not None:
                roles.setdefault(role, index)
                continue
            label = resolve_label(cell)
            if label.field is None:
                if cell.strip():
                    notes.append(name_warning(cell.strip(), label, line=0))
                continue
            column = _Column(index, cell.strip(), label.field, label.unit, 1.0, label.scope)
        if column.name in LONG_ROLES:
            roles.setdefault(column.name, index)
        else:
            columns.append(column)
    return columns, roles, rejected_column, notes


def _sheet_scope(profile: CsvProfile | None, columns: list[_Column]) -> Scope:
    """What the rows are: the profile's ``scope``, else circuits when a column names the circuit, else
    boards or the installation when a column can only mean a board's (Zdb, location, PFC at board) or
    the installation's fact (Ze at origin) and every field column is one of them."""
    if profile is not None and profile.scope is not None:
        return SHEET_SCOPES[profile.scope]
    names = {c.name for c in columns}
    if "circuit" in names:
        return "circuit"
    fields = [c for c in columns if c.name not in ("board", "circuit")]
    for scope in ("board", "installation"):
        only_here = [c for c in fields if c.scope == scope or c.name not in SCOPE_NAMES["circuit"]]
        if only_here and all(in_scope(Label(c.name, scope=c.scope), scope) for c in fields) \
                and (scope == "board") == ("board" in names):
            return scope
    return "circuit"


def plan_layout(header: list[str], profile: CsvProfile | None, decimal_comma: bool
                ) -> tuple[Layout | None, str]:
    """The layout a header describes, or ``None`` and why it is not recognised."""
    columns, roles, rejected_column, notes = _classify(header, profile)
    scope = _sheet_scope(profile, columns)
    wide: list[tuple[int, str, CellParser]] = []
    keys: dict[str, int] = {}
    for column in columns:
        name, cell = column.name, column.cell
        if name in ("board", "circuit") and (scope == "circuit" or (scope == "board" and name == "board")):
            if name in keys:
                notes.append(_note("duplicate_column", cell,
                                   f"{cell!r} also names the {name}, already read from column "
                                   f"{header[keys[name]].strip()!r}: its values are not read", name))
            keys.setdefault(name, column.index)
        elif not in_scope(Label(name, scope=column.scope), scope):
            notes.append(name_warning(cell, Label(name, scope=column.scope), line=0, scope=scope))
        elif all(existing != name for _, existing, _ in wide):
            wide.append((column.index, name, CellParser(name, unit=column.unit, decimal_comma=decimal_comma,
                                                        scale=column.scale, scope=scope)))
        else:
            first = next(header[i].strip() for i, existing, _ in wide if existing == name)
            notes.append(_note("duplicate_column", cell,
                               f"{cell!r} also names {name}, already read from column "
                               f"{first!r}: its values are not read", name))
    default_board = profile.defaults.get("board") if profile else None
    if scope == "circuit" and "circuit" not in keys:
        return None, ("no column names the circuit (Circuit, Cct, Way …); a sheet of board or "
                      "installation facts names a column only they have (Zdb, Location, PFC at board, "
                      "Ze at origin) or uses a profile with \"scope\"")
    if scope != "installation" and "board" not in keys and not default_board:
        return None, "no column names the board (DB, Board …) and the profile gives no default board"
    layout = Layout(kind="wide", board=keys.get("board"), circuit=keys.get("circuit"), width=len(header),
                    notes=notes, rejected=rejected_column, scope=scope)
    wants_long = (profile.layout == "long") if profile and profile.layout else (
        "test" in roles and "value" in roles and not wide)
    if wants_long:
        if "test" not in roles or "value" not in roles:
            return None, "a long layout needs a test column and a value column"
        layout.kind = "long"
        layout.test, layout.value, layout.unit = roles["test"], roles["value"], roles.get("unit")
        if profile:
            layout.tests = {fold(t.source): LongTest(t.field, t.unit, t.scale) for t in profile.tests}
        layout.notes += [_note("ignored_column", header[i].strip(),
                               f"{header[i].strip()!r} names {name}, but a long layout takes readings from "
                               "its test and value columns only: its values are not read", name)
                         for i, name, _ in wide]
        if rejected_column is not None:
            layout.rejected = None
            cell = header[rejected_column].strip()
            layout.notes.append(_note("ignored_column", cell,
                                      f"{cell!r} carries refused values, but a long layout takes them from "
                                      "rows whose test is 'rejected': its values are not read"))
        return layout, ""
    if not wide and profile is None and rejected_column is None:
        return None, "no column names a reading or design value"
    layout.columns = wide
    return layout, ""


def long_test(layout: Layout, label: str) -> LongTest | None:
    """A long-layout test label → its field, unit and scale (profile first, then aliases), or None when
    it names no field of the sheet's scope."""
    key = fold(label)
    hit = layout.tests.get(key)
    if hit is None:
        found = resolve_label(label)
        name, unit = found.field, found.unit
        if name is None or name in ("board", "circuit") or not in_scope(found, layout.scope):
            return None
        hit = LongTest(name, unit, 1.0)
        if len(layout.tests) < 4096:
            layout.tests[key] = hit
    return hit
