"""Trade notation from a schedule of test results, read into the record's split fields.

A schedule writes a protective device as ``B32`` or ``BS 88-3 32A``, a cable as
``2.5/1.5``, an RCD as ``30mA A``, the earthing system as ``TN-C-S (PME)``, and
puts ``N/A`` (the test does not apply) or ``LIM`` (a recorded limitation: not
tested) in a cell. This module reads such text; it does not judge it.

Invariants:
- Total on any input: a parser returns a :class:`Notation`, a cell word
  (:class:`NotApplicable`, :class:`Limitation`) or ``None`` (a blank cell), or
  raises :class:`NotationError`, a :class:`ReadingError` whose ``field`` is the
  notation's name and whose ``text`` is the text as written. Nothing else escapes.
- Never a guess: text that is not exactly one of the forms below is an error
  that quotes it. A form that could mean two things is refused (``32A type B``:
  curve or RCD type?; ``RCBO B20 A``: 20 A, or type A?; ``BS 88 32A``: which part?).
- What the text implies but does not write (the standard of a bare ``B32``, the
  kind of a ``BS 88-3`` device) is set and listed in ``Notation.inferred`` with
  its reason, for the verdict to show. An RCD without ``S`` leaves
  ``rcd_delayed`` unset: the ruleset's default applies, and is reported there.
- A notation sets only the fields ``NOTATION_FIELDS[name]`` lists, with the types
  and spellings a :class:`~engine.records.CircuitRecord` holds (floats, ``"TN-C-S"``).
- Case and runs of whitespace do not matter; digits are ASCII. A decimal comma
  is read only when the caller says the source uses them, and then a decimal
  point is refused (there it would be a grouping mark, so ``1.000`` is 1 or 1000).

API (for a record builder):
- ``parse_notation(name, raw, *, decimal_comma=False)`` with ``name`` one of
  ``NOTATION_FIELDS`` (``device``, ``cable``, ``rcd``, ``earthing``);
  ``parse_device``, ``parse_cable``, ``parse_rcd``, ``parse_earthing`` are the same
  per name. ``raw`` is what the input held (``None`` → ``None``; not text → error).
- ``Notation.fields`` (split field → value) and ``Notation.inferred`` (split field →
  why it was inferred) are read-only mappings.
- ``cell_word(raw)`` → ``NotApplicable`` / ``Limitation`` / ``None``, for any field.
  Each sentinel keeps the text and has ``code`` and ``reason`` (a check given
  ``Limitation`` is ``incomplete``, "limitation recorded: not tested", never ``pass``).

Forms (the curve letter and standards as in BS 7671 Tables 41.2, 41.3 and 41.4):
- device: ``B32``, ``c 16A``, ``MCB D10``, ``RCBO B20 30mA A``,
  ``BS EN 60898 B16`` (also ``-1``, ``EN``/``IEC``), ``BS EN 61009 C32 30mA``,
  ``BS 88-2 63A``, ``BS 88-3 32A``, ``BS 3036 15A``, ``BS 1362 13A``, ``BS 1361 30A``.
- cable: ``2.5/1.5``, ``6 / 2.5 mm²`` (line/cpc, ``mm²``, ``mm2`` or ``mm^2``).
- rcd: ``30mA``, ``30mA A``, ``30 mA type A``, ``100mA S``, ``RCD 300mA S AC``
  (type ``AC``/``A``/``F``/``B`` and ``S`` once each, either order).
- earthing: ``TN-S``, ``TN-C-S``, ``TN-C-S (PME)``, ``PME``, ``TNCS``, ``TT``, ``IT``.
- cell words: ``N/A``, ``N / A``, ``NA``, ``N.A.``, ``not applicable``; ``LIM``,
  ``LIM.``, ``limitation``. Blank: empty, ``-``, ``none``, ``null``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import ClassVar, Final, NoReturn, TypeAlias

from .errors import ReadingError
from .readings import DECLARE_COMMAS

__all__ = [
    "NOTATION_FIELDS",
    "CellWord",
    "FieldValue",
    "Limitation",
    "NotApplicable",
    "Notation",
    "NotationError",
    "cell_word",
    "parse_cable",
    "parse_device",
    "parse_earthing",
    "parse_notation",
    "parse_rcd",
]

FieldValue: TypeAlias = str | float | bool

_RCD_FIELDS = ("rcd_residual_ma", "rcd_type", "rcd_delayed")
NOTATION_FIELDS: Final[Mapping[str, frozenset[str]]] = MappingProxyType({
    "device": frozenset({"device_kind", "device_standard", "device_curve", "device_rating_a", *_RCD_FIELDS}),
    "cable": frozenset({"line_mm2", "cpc_mm2"}),
    "rcd": frozenset(_RCD_FIELDS),
    "earthing": frozenset({"earthing"}),
})


class NotationError(ReadingError):
    """Trade notation that is none of the accepted forms; ``text`` is what was written."""

    code = "bad_notation"


@dataclass(frozen=True, slots=True, kw_only=True)
class NotApplicable:
    """The cell word ``N/A``: the test does not apply to this circuit."""

    text: str
    code: ClassVar[str] = "not_applicable"
    reason: ClassVar[str] = "not applicable: the test does not apply"


@dataclass(frozen=True, slots=True, kw_only=True)
class Limitation:
    """The cell word ``LIM``: a limitation was recorded, so the item was not tested."""

    text: str
    code: ClassVar[str] = "limitation"
    reason: ClassVar[str] = "limitation recorded: not tested"


CellWord: TypeAlias = NotApplicable | Limitation


@dataclass(frozen=True, slots=True, kw_only=True)
class Notation:
    """One notation read: its name, the text, the split fields it gives and what was inferred."""

    name: str
    text: str
    fields: Mapping[str, FieldValue] = field(hash=False)
    inferred: Mapping[str, str] = field(hash=False)

    def __post_init__(self) -> None:
        allowed = NOTATION_FIELDS.get(self.name)
        if allowed is None or not set(self.fields) <= allowed or not set(self.inferred) <= set(self.fields):
            raise ValueError(f"{self.name!r} notation cannot set {sorted(self.fields)}")
        object.__setattr__(self, "fields", MappingProxyType(dict(self.fields)))
        object.__setattr__(self, "inferred", MappingProxyType(dict(self.inferred)))


_FLAGS = re.IGNORECASE | re.ASCII
_NUM = r"[0-9]+(?:[.,][0-9]+)?"
_BLANK = frozenset({"", "-", "–", "—", "NONE", "NULL"})
_NOT_APPLICABLE = frozenset({"N/A", "NA", "N.A.", "N.A", "NOTAPPLICABLE"})
_LIMITATION = frozenset({"LIM", "LIM.", "LIMITATION"})


def _upper(text: str) -> str:
    """Upper case for ASCII text only: ``"ſ".upper()`` is ``"S"``, which would read as a marking."""
    return text.upper() if text.isascii() else text


def cell_word(raw: object) -> CellWord | None:
    """``N/A`` → :class:`NotApplicable`, ``LIM`` → :class:`Limitation`, anything else → ``None``."""
    if not isinstance(raw, str):
        return None
    folded = _upper("".join(raw.split()))
    if folded in _NOT_APPLICABLE:
        return NotApplicable(text=raw)
    if folded in _LIMITATION:
        return Limitation(text=raw)
    return None


def _fail(name: str, raw: str, why: str) -> NoReturn:
    raise NotationError(f"{name}: cannot read {raw!r}: {why}", field=name, text=raw)


def _number(token: str, what: str, name: str, raw: str, decimal_comma: bool) -> float:
    if "," in token and not decimal_comma:
        _fail(name, raw, f"the {what} has a decimal comma, but the source does not declare decimal commas"
                         f"{DECLARE_COMMAS}")
    if "." in token and decimal_comma:
        _fail(name, raw, f"the {what} has a '.', but the source declares decimal commas")
    value = float(token.replace(",", "."))
    if not math.isfinite(value) or value <= 0:
        _fail(name, raw, f"the {what} must be a positive number")
    return value


@dataclass(frozen=True, slots=True)
class _Standard:
    pattern: re.Pattern[str]
    name: str
    kind: str  # "breaker", "rcbo" or "fuse"
    table: str  # where BS 7671 lists devices to it


def _std(pattern: str, name: str, kind: str, table: str) -> _Standard:
    return _Standard(re.compile(pattern + r"(?=\s|$)", _FLAGS), name, kind, table)


_STANDARDS: Final = (
    _std(r"BS\s*EN\s*60898(?:-1)?", "BS EN 60898", "breaker", "Table 41.3"),
    _std(r"BS\s*EN\s*61009(?:-1)?", "BS EN 61009", "rcbo", "Table 41.3"),
    _std(r"EN\s*60898(?:-1)?", "EN 60898", "breaker", "Table 41.3"),
    _std(r"EN\s*61009(?:-1)?", "EN 61009", "rcbo", "Table 41.3"),
    _std(r"IEC\s*60898(?:-1)?", "IEC 60898", "breaker", "Table 41.3"),
    _std(r"IEC\s*61009(?:-1)?", "IEC 61009", "rcbo", "Table 41.3"),
    _std(r"BS\s*88\s*-\s*2", "BS 88-2", "fuse", "Tables 41.2 and 41.4"),
    _std(r"BS\s*88\s*-\s*3", "BS 88-3", "fuse", "Tables 41.2 and 41.4"),
    _std(r"BS\s*3036", "BS 3036", "fuse", "Tables 41.2 and 41.4"),
    _std(r"BS\s*1362", "BS 1362", "fuse", "Tables 41.2 and 41.4"),
    _std(r"BS\s*1361", "BS 1361", "fuse", "Tables 41.2 and 41.4, as BS 88-3 system C"),
)
_KNOWN = ", ".join(s.name for s in _STANDARDS)
_LOOKS_LIKE_STANDARD = re.compile(r"(?:BS|EN|IEC)(?:\s|[0-9]|$)", _FLAGS)
_BS88_WITHOUT_PART = re.compile(r"BS\s*88(?:\s|$)", _FLAGS)
_KIND_WORD = re.compile(r"(MCB|RCBO)(?:\s+|$)", _FLAGS)
_FUSE = re.compile(rf"(?P<rating>{_NUM})\s*A?", _FLAGS)
_BREAKER = re.compile(rf"(?P<curve>[A-Z])\s*(?P<rating>{_NUM})(?P<amps>\s*A)?(?:\s+(?P<rcd>.+))?", _FLAGS)
_DEVICE_FORMS = "write e.g. B32, RCBO B20 30mA A, BS EN 61009 C32 30mA or BS 88-3 32A"
_KIND_NAMES = {"breaker": "circuit-breaker", "rcbo": "RCBO"}
_KIND_WORDS = {"breaker": "MCB", "rcbo": "RCBO"}
_DIGIT = re.compile(r"[0-9]")
_CURVE_KIND = "a curve letter and rating name a circuit-breaker (BS 7671 Table 41.3)"
_CURVE_STANDARD = {
    "breaker": ("BS EN 60898", "a circuit-breaker with a curve letter is taken to be to BS EN 60898"),
    "rcbo": ("BS EN 61009", "an RCBO with a curve letter is taken to be to BS EN 61009"),
}


def _split_standard(text: str) -> tuple[_Standard | None, str]:
    """The standard ``text`` opens with, if any, and what follows it."""
    for standard in _STANDARDS:
        if match := standard.pattern.match(text):
            return standard, text[match.end():].lstrip()
    return None, text


def _fuse(standard: _Standard, rest: str, name: str, raw: str, decimal_comma: bool) -> Notation:
    fuse = _FUSE.fullmatch(rest)
    if fuse is None:
        _fail(name, raw, f"a fuse is written as its standard and rating, e.g. {standard.name} 32A")
    fields: dict[str, FieldValue] = {
        "device_kind": "fuse",
        "device_standard": standard.name,
        "device_rating_a": _number(fuse["rating"], "rating", name, raw, decimal_comma),
    }
    why = f"fuse: {standard.name} is a standard for fuses (BS 7671 {standard.table})"
    return Notation(name=name, text=raw, fields=fields, inferred={"device_kind": why})


def _device(name: str, raw: str, text: str, decimal_comma: bool) -> Notation:
    word: str | None = None
    rest = text
    if match := _KIND_WORD.match(rest):
        word, rest = match.group(1).upper(), rest[match.end():]
    standard, rest = _split_standard(rest)
    if standard is None and _BS88_WITHOUT_PART.match(rest):
        _fail(name, raw, "BS 88 has parts with different limits: write BS 88-2 (systems E and G) "
                         "or BS 88-3 (system C)")
    if standard is None and _LOOKS_LIKE_STANDARD.match(rest):
        _fail(name, raw, f"not a device standard ohmtally reads ({_KNOWN}); "
                         "for another, give device_standard and device_max_zs_ohm")
    if standard is not None and standard.kind == "fuse":
        if word is not None:
            _fail(name, raw, f"{standard.name} is a fuse standard, not one for an {word}")
        return _fuse(standard, rest, name, raw, decimal_comma)
    fields: dict[str, FieldValue] = {}
    inferred: dict[str, str] = {}
    breaker = _BREAKER.fullmatch(rest)
    if breaker is None and _DIGIT.match(rest):
        _fail(name, raw, "the curve letter comes before the rating (B32); a rating first is refused, "
                         "as 'type B' after it may be the RCD type")
    if breaker is None:
        _fail(name, raw, _DEVICE_FORMS)
    curve = _upper(breaker["curve"])
    if curve not in ("B", "C", "D"):
        _fail(name, raw, f"curve {breaker['curve']!r} is not B, C or D (BS 7671 Table 41.3)")
    kind = standard.kind if standard is not None else "rcbo" if word == "RCBO" else "breaker"
    fields["device_kind"] = kind
    if standard is None:
        if word is None:
            inferred["device_kind"] = f"breaker: {_CURVE_KIND}"
        fields["device_standard"], why = _CURVE_STANDARD[kind]
        inferred["device_standard"] = f"{fields['device_standard']}: {why} (BS 7671 Table 41.3)"
    else:
        if word is not None and word != _KIND_WORDS[kind]:
            _fail(name, raw, f"{standard.name} is not a standard for an {word}")
        if word is None:
            inferred["device_kind"] = (f"{kind}: {standard.name} is a standard for {_KIND_NAMES[kind]}s "
                                       f"(BS 7671 {standard.table})")
        fields["device_standard"] = standard.name
    fields["device_curve"] = curve
    fields["device_rating_a"] = _number(breaker["rating"], "rating", name, raw, decimal_comma)
    if kind == "rcbo" and (breaker["amps"] or "").startswith(" ") and breaker["rcd"] is None:
        _fail(name, raw, "'A' apart from an RCBO's rating may be amperes or RCD type A; "
                         "write B20A, or B20 30mA A")
    if breaker["rcd"] is not None:
        if kind != "rcbo" and _RCD.fullmatch(breaker["rcd"]):
            _fail(name, raw, "a residual current belongs to an RCBO (RCBO B20 30mA A); "
                             "a separate RCD goes in rcd")
        if kind != "rcbo":
            _fail(name, raw, _DEVICE_FORMS)
        fields.update(_rcd_fields(breaker["rcd"], name, raw, decimal_comma))
    return Notation(name=name, text=raw, fields=fields, inferred=inferred)


_RCD_WORD = re.compile(r"(?:RCD|RCCB)\s+", _FLAGS)
_RCD = re.compile(rf"(?P<ma>{_NUM})\s*mA(?P<rest>\s.*)?", _FLAGS)
_RCD_TYPES = frozenset({"AC", "A", "F", "B"})
_RCD_FORMS = "an RCD is written as IΔn in mA, then its type and S if time-delayed, e.g. 30mA A or 100mA S"


def _rcd_fields(text: str, name: str, raw: str, decimal_comma: bool) -> dict[str, FieldValue]:
    match = _RCD.fullmatch(text)
    if match is None:
        _fail(name, raw, _RCD_FORMS)
    out: dict[str, FieldValue] = {
        "rcd_residual_ma": _number(match["ma"], "residual current", name, raw, decimal_comma)}
    tokens = iter((match["rest"] or "").split())
    for token in tokens:
        word = _upper(token)
        if word == "TYPE":
            word = _upper(next(tokens, ""))
        if word == "S" and "rcd_delayed" not in out:
            out["rcd_delayed"] = True  # S: time-delayed (BS EN 61008-1 / 61009-1 type S)
        elif word in _RCD_TYPES and "rcd_type" not in out:
            out["rcd_type"] = word
        else:
            _fail(name, raw, f"after the residual current come one type (AC, A, F, B) and S "
                             f"if time-delayed, each once; {token!r} is not one of them")
    return out


def _rcd(name: str, raw: str, text: str, decimal_comma: bool) -> Notation:
    if match := _RCD_WORD.match(text):
        text = text[match.end():]
    return Notation(name=name, text=raw, fields=_rcd_fields(text, name, raw, decimal_comma), inferred={})


_MM2 = r"(?:\s*(?:mm²|mm2|mm\^2))?"
_CABLE = re.compile(rf"(?P<line>{_NUM}){_MM2}\s*/\s*(?P<cpc>{_NUM}){_MM2}", _FLAGS)


def _cable(name: str, raw: str, text: str, decimal_comma: bool) -> Notation:
    match = _CABLE.fullmatch(text)
    if match is None:
        _fail(name, raw, "a cable is written line/cpc in mm², e.g. 2.5/1.5 "
                         "(one size alone goes in line_mm2 or cpc_mm2)")
    fields: dict[str, FieldValue] = {
        "line_mm2": _number(match["line"], "line size", name, raw, decimal_comma),
        "cpc_mm2": _number(match["cpc"], "cpc size", name, raw, decimal_comma),
    }
    return Notation(name=name, text=raw, fields=fields, inferred={})


_EARTHING_FOLD = re.compile(r"[\s\-‐‑–_./]+")
_EARTHING: Final = {"TNS": "TN-S", "TNCS": "TN-C-S", "TNCS(PME)": "TN-C-S", "TNCSPME": "TN-C-S",
                    "PME": "TN-C-S", "TT": "TT", "IT": "IT"}


def _earthing(name: str, raw: str, text: str, _decimal_comma: bool) -> Notation:
    system = _EARTHING.get(_upper(_EARTHING_FOLD.sub("", text)))
    if system is None:
        _fail(name, raw, "not an earthing system ohmtally reads: TN-S, TN-C-S (PME), TT or IT")
    return Notation(name=name, text=raw, fields={"earthing": system}, inferred={})


_Parser: TypeAlias = Callable[[str, str, str, bool], Notation]
_PARSERS: Final[Mapping[str, _Parser]] = MappingProxyType(
    {"device": _device, "cable": _cable, "rcd": _rcd, "earthing": _earthing})


def parse_notation(name: str, raw: object, *, decimal_comma: bool = False) -> Notation | CellWord | None:
    """Read ``raw`` as the ``name`` notation; raises :class:`NotationError` for anything else."""
    parser = _PARSERS.get(name)
    if parser is None:
        raise NotationError(f"unknown notation {name!r}; known: {', '.join(_PARSERS)}", field=name)
    if raw is None:
        return None
    if not isinstance(raw, str):
        raise NotationError(f"{name}: expected text, got {raw!r}", field=name, text=str(raw))
    text = " ".join(raw.split())
    if _upper(text) in _BLANK:
        return None
    return cell_word(raw) or parser(name, raw, text, decimal_comma)


def parse_device(raw: object, *, decimal_comma: bool = False) -> Notation | CellWord | None:
    """A protective device: ``B32``, ``RCBO B20 30mA A``, ``BS 88-3 32A`` …"""
    return parse_notation("device", raw, decimal_comma=decimal_comma)


def parse_cable(raw: object, *, decimal_comma: bool = False) -> Notation | CellWord | None:
    """A cable as line/cpc cross-sections in mm²: ``2.5/1.5``."""
    return parse_notation("cable", raw, decimal_comma=decimal_comma)


def parse_rcd(raw: object, *, decimal_comma: bool = False) -> Notation | CellWord | None:
    """An RCD: ``30mA A``, ``100mA S``."""
    return parse_notation("rcd", raw, decimal_comma=decimal_comma)


def parse_earthing(raw: object) -> Notation | CellWord | None:
    """An earthing system: ``TN-C-S (PME)``, ``TN-S``, ``TT``, ``IT``."""
    return parse_notation("earthing", raw)
