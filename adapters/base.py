"""The adapter protocol: an input stream in, record fragments and line errors out.

Invariants (every adapter keeps them; tests check the built-ins):
- Results come in input order and stream: memory stays constant in the size of
  the input (one line or row at a time).
- Every input line is accounted for exactly once: as one :class:`Fragment`
  (a circuit's fields), one :class:`BoardFacts` or :class:`InstallationFacts`
  (facts recorded once, which circuits inherit), one :class:`LineError` or one
  :class:`Skipped` (blank, comment, header, context line). A row with one bad
  cell yields its good cells as a fragment *and* a :class:`LineError` per bad
  cell (the fragment counts for the line); the fragment names each refused
  cell in ``rejected`` (field → the text refused), so the record remembers
  it: a refused value is never replaced by a default. A cell holding ``N/A``
  or ``LIM`` (:func:`engine.cell_mark`) is neither a value nor an error: it
  is remembered in ``marks``.
- Every column and key is accounted for too: a name that is read as no field
  (unknown, ambiguous, a second column for a field already read, a column a
  profile leaves out) is an :class:`InputWarning` right after the result of
  the line that names it. A warning never accounts for a line and never
  rejects anything: the rest of the line is taken. Each such name is reported
  once per input, where it first appears (a CSV header, or the first line or
  record that carries the key), so the same mistake gives the same account in
  every format.
- Nothing raises out of ``read`` for any byte sequence; only a bad *option*
  (an unknown profile, an invalid profile document) raises :class:`AdapterError`
  before the first result.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field
from typing import IO, Any, ClassVar, Protocol, runtime_checkable

__all__ = [
    "Adapter",
    "AdapterError",
    "AdapterOptions",
    "BoardFacts",
    "Facts",
    "Fragment",
    "InputWarning",
    "InstallationFacts",
    "LineError",
    "Result",
    "Skipped",
]


class AdapterError(Exception):
    """Root of the adapters' errors: a bad option or profile, never a bad input line."""

    code = "adapter_error"

    def __init__(self, message: str, *, code: str | None = None,
                 details: Mapping[str, Any] | None = None) -> None:
        super().__init__(message)
        self.message = message
        if code:
            self.code = code
        self.details = dict(details or {})


@dataclass(frozen=True, slots=True, kw_only=True)
class Fragment:
    """Some fields of one circuit record, from one input line (or row).

    ``rejected`` names the fields whose cell on this line was refused, with the
    text refused (each also a :class:`LineError`), so the record remembers the
    refusal and no check takes a default in its place; a field is in
    ``fields`` or in ``rejected``, never both.
    """

    board: str
    circuit: str
    # field name -> typed value (Reading, float, str, bool); a notation input (device, cable,
    # rcd) -> its text, for engine.build_record to read into the split fields
    fields: Mapping[str, Any]
    line: int
    rejected: Mapping[str, str] = field(default_factory=dict)  # field name -> the text refused
    marks: Mapping[str, str] = field(default_factory=dict)  # field name -> "N/A" | "LIM" (engine.marks)

    @property
    def key(self) -> tuple[str, str]:
        return (self.board, self.circuit)


@dataclass(frozen=True, slots=True, kw_only=True)
class BoardFacts:
    """Facts of one distribution board (:data:`engine.BOARD_FIELDS`), from one line, row or object.

    ``fields`` hold typed values (coerced by the board field table), ``rejected``
    and ``marks`` what a :class:`Fragment` holds for a circuit; ``board`` is the key.
    """

    board: str
    fields: Mapping[str, Any]
    line: int
    rejected: Mapping[str, str] = field(default_factory=dict)
    marks: Mapping[str, str] = field(default_factory=dict)


@dataclass(frozen=True, slots=True, kw_only=True)
class InstallationFacts:
    """Facts of the installation (:data:`engine.INSTALLATION_FIELDS`), from one line, row or object."""

    fields: Mapping[str, Any]
    line: int
    rejected: Mapping[str, str] = field(default_factory=dict)
    marks: Mapping[str, str] = field(default_factory=dict)


@dataclass(frozen=True, slots=True, kw_only=True)
class LineError:
    """One input line, or one cell of it, that could not be taken."""

    line: int
    reason: str
    code: str = "bad_line"
    field: str | None = None
    column: str | None = None
    text: str | None = None
    pointer: str | None = None  # JSON Pointer into a JSON input (``/3/zs_ohm``)

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"line": self.line, "code": self.code, "reason": self.reason}
        for name in ("field", "column", "text", "pointer"):
            value = getattr(self, name)
            if value is not None:
                out[name] = value
        return out


@dataclass(frozen=True, slots=True, kw_only=True)
class Skipped:
    """A line that carries no reading: blank, comment, header or context line."""

    line: int
    reason: str


@dataclass(frozen=True, slots=True, kw_only=True)
class InputWarning:
    """Something in the input that was read as nothing, said out loud; nothing was rejected.

    ``column`` is the name as the input spells it (a CSV header cell, a line
    key, a JSON member), ``line`` where it first appears, ``fields`` the fields
    an ambiguous name could mean. Codes: ``unknown_field``, ``ambiguous_label``,
    ``duplicate_column``, ``ignored_column``.
    """

    line: int
    code: str
    reason: str
    column: str | None = None
    field: str | None = None
    fields: tuple[str, ...] = ()
    pointer: str | None = None

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"line": self.line, "code": self.code, "reason": self.reason}
        for name in ("column", "field", "pointer"):
            value = getattr(self, name)
            if value is not None:
                out[name] = value
        if self.fields:
            out["fields"] = list(self.fields)
        return out


Facts = BoardFacts | InstallationFacts
Result = Fragment | BoardFacts | InstallationFacts | LineError | Skipped | InputWarning


@dataclass(frozen=True, slots=True, kw_only=True)
class AdapterOptions:
    """Options every adapter understands; adapter-specific ones go in ``extra``."""

    profile: str | None = None  # profile name (built-in or from OHMTALLY_PROFILE_DIR)
    profile_dir: str | None = None
    # Decimal commas (0,82): True/False as the caller declares (the API's ?decimal=comma|point);
    # None: as the profile says, else CSV detects and the lines format reads points. A
    # ``#% decimal=…`` line in the lines format overrides it from that line on.
    decimal_comma: bool | None = None
    encoding: str | None = None  # None: detect
    max_line_length: int = 65536
    max_columns: int = 512
    extra: Mapping[str, Any] = field(default_factory=dict)


@runtime_checkable
class Adapter(Protocol):
    """What the registry loads from the ``ohmtally.adapters`` entry points."""

    name: ClassVar[str]
    description: ClassVar[str]
    media_types: ClassVar[tuple[str, ...]]  # content types the API routes to it
    extensions: ClassVar[tuple[str, ...]]  # file extensions the CLI routes to it

    def read(self, stream: IO[bytes], options: AdapterOptions) -> Iterator[Result]: ...
