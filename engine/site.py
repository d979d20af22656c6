"""Installation and board records: facts recorded once, which the circuits inherit.

Inspectors record the supply and earthing once per installation and a few
figures once per distribution board. A :class:`Site` holds them beside the
circuit records; :mod:`engine.inheritance` hands them to each circuit.

Invariants:
- :class:`InstallationRecord` and :class:`BoardRecord` are frozen, slotted,
  keyword-only dataclasses whose fields are exactly those of
  :data:`INSTALLATION_FIELDS` and :data:`BOARD_FIELDS` (generated into
  engine/README.md), plus ``rejected`` and ``marks`` as a circuit record has.
- They are built like a circuit record (:func:`engine.build_record`), by the
  same rule for every value (:func:`engine.coerce.coerce_spec`): bad values are
  ``FieldError`` values remembered in ``rejected``, ``N/A`` and ``LIM`` are
  remembered in ``marks``, unknown names are ``unknown_field`` errors, nothing
  raises. A board without ``board`` is not built.
- ``installation_to_dict`` / ``board_to_dict`` round-trip:
  ``build_board(board_to_dict(b))[0] == b``.
- Which board or installation field a circuit inherits, and as which circuit
  field, is data here (:data:`BOARD_TO_CIRCUIT`, :data:`INSTALLATION_TO_CIRCUIT`),
  with the two conditions: :data:`ORIGIN_ONLY` fields only for boards at the
  origin, :data:`SAME_EARTHING_ONLY` only where the board keeps the
  installation's earthing. ``phases`` is recorded but never inherited: a
  three-phase board feeds single-phase circuits.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, Final, Literal

from .coerce import coerce_spec
from .errors import ReadingError
from .fields import FIELDS, FieldSpec
from .intake import MARKS_KEY, REJECTED_KEY, FieldError, take_fields
from .readings import Reading

__all__ = [
    "BOARD_FIELDS",
    "BOARD_TO_CIRCUIT",
    "INSTALLATION_FIELDS",
    "INSTALLATION_TO_CIRCUIT",
    "ORIGIN_ONLY",
    "SAME_EARTHING_ONLY",
    "SITE_FIELDS",
    "BoardRecord",
    "InstallationRecord",
    "Scope",
    "Site",
    "SiteError",
    "board_to_dict",
    "build_board",
    "build_installation",
    "build_site",
    "coerce_site_field",
    "installation_to_dict",
]

Scope = Literal["installation", "board"]


def _as(name: str, meaning: str, *, like: str | None = None) -> FieldSpec:
    """A site field: the circuit field ``like`` (or of the same name) with its own meaning."""
    return dataclasses.replace(FIELDS[like or name], name=name, meaning=meaning)


_INSTALLATION_SPECS: Final = (
    _as("description", "the installation: address or what it is (not inherited)"),
    _as("earthing", "earthing system (TN-S, TN-C-S, TT, IT; `TN-C-S (PME)` as schedules write it)"),
    _as("nominal_voltage_v", "U0, line to earth (default 230)"),
    _as("phases", "phases of the supply (recorded, not inherited: a circuit's own phases counts)"),
    _as("supply", "public or private LV supply, for the voltage-drop limits (default public)"),
    _as("ze_ohm", "Ze measured at the origin (inherited by the circuits of boards at the origin)"),
    _as("pfc_ka", "prospective fault current at the origin (inherited as Ze is)"),
    _as("ra_ohm", "the installation's earth electrode resistance, TT (not for a board earthed otherwise)"),
    _as("premises", "domestic (a dwelling) or other premises"),
    _as("test_temp_c", "conductor temperature when the readings were taken (default 20)"),
    _as("conductor_material", "conductor metal (default copper)"),
)
_BOARD_SPECS: Final = (
    _as("board", "distribution board reference (required)"),
    _as("description", "free text (not inherited)"),
    _as("location", "where the board is (not inherited)", like="description"),
    _as("board_fed_from", "`BOARD/CIRCUIT` of the circuit feeding this board (none: at the origin)"),
    _as("zdb_ohm", "loop impedance measured at the board, Zdb: the Ze its circuits see", like="ze_ohm"),
    _as("pfc_ka", "prospective fault current at the board: what its devices must break"),
    _as("earthing", "the board's own earthing system (a TT outbuilding under a TN installation)"),
    _as("ra_ohm", "the board's own earth electrode resistance (a TT outbuilding)"),
    _as("nominal_voltage_v", "U0, line to earth, at the board"),
    _as("phases", "phases of the board (recorded, not inherited)"),
)
INSTALLATION_FIELDS: Final[Mapping[str, FieldSpec]] = MappingProxyType(
    {s.name: s for s in _INSTALLATION_SPECS})
BOARD_FIELDS: Final[Mapping[str, FieldSpec]] = MappingProxyType({s.name: s for s in _BOARD_SPECS})
SITE_FIELDS: Final[Mapping[str, Mapping[str, FieldSpec]]] = MappingProxyType(
    {"installation": INSTALLATION_FIELDS, "board": BOARD_FIELDS})

#: Board field → the circuit field it gives the board's circuits.
BOARD_TO_CIRCUIT: Final[Mapping[str, str]] = MappingProxyType({
    "zdb_ohm": "ze_ohm", "pfc_ka": "pfc_ka", "earthing": "earthing", "ra_ohm": "ra_ohm",
    "nominal_voltage_v": "nominal_voltage_v", "board_fed_from": "board_fed_from",
})
#: Installation field → the circuit field it gives every circuit (with the conditions below).
INSTALLATION_TO_CIRCUIT: Final[Mapping[str, str]] = MappingProxyType({
    "earthing": "earthing", "nominal_voltage_v": "nominal_voltage_v", "supply": "supply",
    "premises": "premises", "test_temp_c": "test_temp_c", "conductor_material": "conductor_material",
    "ze_ohm": "ze_ohm", "pfc_ka": "pfc_ka", "ra_ohm": "ra_ohm",
})
#: Installation fields measured at the origin: only circuits of a board with no feeder inherit them.
ORIGIN_ONLY: Final[frozenset[str]] = frozenset({"ze_ohm", "pfc_ka"})
#: Installation fields of its own earth: not for a board whose earthing differs from the installation's.
SAME_EARTHING_ONLY: Final[frozenset[str]] = frozenset({"ra_ohm"})


def _memory() -> Mapping[str, str]:
    return {}


@dataclass(frozen=True, slots=True, kw_only=True)
class InstallationRecord:
    """The installation's facts, recorded once (every field optional)."""

    description: str | None = None
    earthing: str | None = None
    nominal_voltage_v: float | None = None
    phases: int | None = None
    supply: str | None = None
    ze_ohm: Reading | None = None
    pfc_ka: Reading | None = None
    ra_ohm: Reading | None = None
    premises: str | None = None
    test_temp_c: float | None = None
    conductor_material: str | None = None
    rejected: Mapping[str, str] = dataclasses.field(default_factory=_memory, hash=False)
    marks: Mapping[str, str] = dataclasses.field(default_factory=_memory, hash=False)


@dataclass(frozen=True, slots=True, kw_only=True)
class BoardRecord:
    """One distribution board's facts, keyed by ``board``."""

    board: str
    description: str | None = None
    location: str | None = None
    board_fed_from: str | None = None
    zdb_ohm: Reading | None = None
    pfc_ka: Reading | None = None
    earthing: str | None = None
    ra_ohm: Reading | None = None
    nominal_voltage_v: float | None = None
    phases: int | None = None
    rejected: Mapping[str, str] = dataclasses.field(default_factory=_memory, hash=False)
    marks: Mapping[str, str] = dataclasses.field(default_factory=_memory, hash=False)


_MEMORY = frozenset({REJECTED_KEY, MARKS_KEY})
assert {f.name for f in dataclasses.fields(InstallationRecord)} - _MEMORY == set(INSTALLATION_FIELDS)
assert {f.name for f in dataclasses.fields(BoardRecord)} - _MEMORY == set(BOARD_FIELDS)


@dataclass(frozen=True, slots=True, kw_only=True)
class Site:
    """The installation (if recorded) and its boards (board reference → record)."""

    installation: InstallationRecord | None = None
    boards: Mapping[str, BoardRecord] = dataclasses.field(default_factory=_memory, hash=False)  # type: ignore[arg-type]

    def __post_init__(self) -> None:
        for name, record in self.boards.items():
            if name != record.board:
                raise ValueError(f"board {record.board!r} is filed under {name!r}")
        object.__setattr__(self, "boards", MappingProxyType(dict(self.boards)))

    @classmethod
    def of(cls, installation: InstallationRecord | None = None,
           boards: Iterable[BoardRecord] = ()) -> Site:
        """A site from its records; a later board with the same reference replaces an earlier one."""
        return cls(installation=installation, boards={b.board: b for b in boards})


@dataclass(frozen=True, slots=True, kw_only=True)
class SiteError:
    """A field of a site document that could not be taken, with the JSON pointer to it."""

    pointer: str
    error: FieldError

    def as_dict(self) -> dict[str, str]:
        return {"pointer": self.pointer, **self.error.as_dict()}


def coerce_site_field(scope: Scope, name: str, raw: Any, *, decimal_comma: bool = False,
                      source: str | None = None) -> Any:
    """One raw value → the typed value of an installation or board field; ``None`` means absent.

    The rule of :func:`engine.coerce_field`: raises :class:`ReadingError` for a
    bad value (and for an unknown scope or field), :class:`engine.marks.MarkedCell`
    for ``LIM`` / "not tested"; ``N/A`` gives ``None``. To remember ``N/A`` and
    ``LIM``, ask :func:`engine.marks.cell_mark` first and keep the mark in the
    record's ``marks``.
    """
    table = SITE_FIELDS.get(scope)
    spec = None if table is None else table.get(name)
    if spec is None:
        raise ReadingError(f"unknown {scope} field {name!r}", field=name, text=None)
    return coerce_spec(spec, raw, decimal_comma=decimal_comma, source=source)


def build_installation(data: Mapping[str, Any], *, decimal_comma: bool = False,
                       source: str | None = None) -> tuple[InstallationRecord, list[FieldError]]:
    """The installation record from loose data; bad fields become errors, good ones are kept."""
    intake = take_fields(data, INSTALLATION_FIELDS, keys=(), decimal_comma=decimal_comma, source=source)
    return InstallationRecord(**intake.values, rejected=intake.rejected, marks=intake.marks), intake.errors


def build_board(data: Mapping[str, Any], *, decimal_comma: bool = False,
                source: str | None = None) -> tuple[BoardRecord | None, list[FieldError]]:
    """A board record from loose data; ``(None, errors)`` only when ``board`` is missing."""
    intake = take_fields(data, BOARD_FIELDS, keys=("board",), decimal_comma=decimal_comma, source=source)
    if not intake.values.get("board"):
        intake.errors.append(FieldError(field="board", code="missing_key",
                                        reason="board is required to key the board record"))
        return None, intake.errors
    return BoardRecord(**intake.values, rejected=intake.rejected, marks=intake.marks), intake.errors


def _to_dict(record: InstallationRecord | BoardRecord, table: Mapping[str, FieldSpec]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for name in table:
        value = getattr(record, name)
        if value is not None:
            out[name] = value.to_json() if isinstance(value, Reading) else value
    if record.marks:
        out[MARKS_KEY] = dict(record.marks)
    if record.rejected:
        out[REJECTED_KEY] = dict(record.rejected)
    return out


def installation_to_dict(record: InstallationRecord) -> dict[str, Any]:
    """JSON-ready data: absent fields left out, readings as number or text, then marks and rejected."""
    return _to_dict(record, INSTALLATION_FIELDS)


def board_to_dict(record: BoardRecord) -> dict[str, Any]:
    """JSON-ready data: absent fields left out, readings as number or text, then marks and rejected."""
    return _to_dict(record, BOARD_FIELDS)


def build_site(data: Mapping[str, Any], *, decimal_comma: bool = False,
               source: str | None = None) -> tuple[Site, list[SiteError]]:
    """The ``installation`` and ``boards`` members of a site document (other members are the caller's).

    ``boards`` is a list of board objects; each error points into the document
    (``/installation/ze_ohm``, ``/boards/1/zdb_ohm``). A board listed twice is
    an error (``duplicate_board``) and the later one is taken, as a later circuit
    record replaces an earlier one.
    """
    errors: list[SiteError] = []
    installation: InstallationRecord | None = None
    raw_installation = data.get("installation")
    if isinstance(raw_installation, Mapping):
        installation, found = build_installation(raw_installation, decimal_comma=decimal_comma, source=source)
        errors += [SiteError(pointer=f"/installation/{_escape(e.field)}", error=e) for e in found]
    elif raw_installation is not None:
        errors.append(SiteError(pointer="/installation", error=FieldError(
            field="installation", reason="installation must be an object of installation fields")))
    boards: dict[str, BoardRecord] = {}
    raw_boards = data.get("boards", ())
    if not isinstance(raw_boards, list | tuple):
        errors.append(SiteError(pointer="/boards", error=FieldError(
            field="boards", reason="boards must be a list of board objects")))
        raw_boards = ()
    for index, item in enumerate(raw_boards):
        if not isinstance(item, Mapping):
            errors.append(SiteError(pointer=f"/boards/{index}", error=FieldError(
                field="boards", reason="a board must be an object of board fields")))
            continue
        board, found = build_board(item, decimal_comma=decimal_comma, source=source)
        errors += [SiteError(pointer=f"/boards/{index}/{_escape(e.field)}", error=e) for e in found]
        if board is None:
            continue
        if board.board in boards:
            errors.append(SiteError(pointer=f"/boards/{index}/board", error=FieldError(
                field="board", code="duplicate_board", text=board.board,
                reason=f"board {board.board!r} is listed twice; the later one is taken")))
        boards[board.board] = board
    return Site(installation=installation, boards=boards), errors


def _escape(token: str) -> str:
    """A JSON pointer reference token (RFC 6901: ``~`` → ``~0``, ``/`` → ``~1``)."""
    return token.replace("~", "~0").replace("/", "~1")
