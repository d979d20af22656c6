"""Validating a mapping profile document, with a JSON Pointer for every problem.

Invariants:
- :func:`parse_profile` either returns plain, checked keyword data for the
  profile dataclasses or raises :class:`AdapterError` ``bad_profile`` whose
  ``details["pointer"]`` names the member at fault (RFC 6901).
- Unknown members are errors, not ignored: a misspelt ``delimeter`` would
  otherwise silently fall back to detection.
- Every ``unit`` is resolved against its field's canonical unit here, once.
- Every regex compiles with RE2 (:mod:`adapters.profile_regex`: linear-time
  matching) and its named groups are fields (or mapped to fields).

Document (csv):  {"name", "description", "kind": "csv", "scope": "circuits"|"boards"|"installation"
(what each row is; the columns and defaults are fields of that record), "layout": "wide"|"long",
"delimiter", "decimal": "."|",", "encoding", "comment", "only_mapped",
"defaults": {field: text}, "columns": {source: field | {"field", "unit", "scale"}},
"tests": {label: field | {...}} (long layout: test labels beyond the aliases)}.
Document (regex): {"name", "description", "kind": "regex", "pattern",
"groups": {group: field | {...}}, "decimal", "encoding", "comment", "defaults"}.
Document (lines): {"name", "description", "kind": "lines", "keys": {key: field | {...}},
"decimal", "encoding", "comment", "defaults"} — our key=value line format with a
logger's own key names, decimal convention and encoding.
"""

from __future__ import annotations

import codecs
import math
import re
from collections.abc import Mapping
from typing import Any

from engine import BOARD_FIELDS, FIELDS, INSTALLATION_FIELDS, FieldSpec
from engine.record_notation import NOTATION_INPUTS
from engine.units import UnitMismatch, UnknownUnit, unit_factor

from .aliases import fold
from .base import AdapterError
from .profile_regex import PatternError, compile_pattern
from .scopes import SCOPE_NAMES, Scope

__all__ = ["LONG_ROLES", "SHEET_SCOPES", "parse_profile"]

LONG_ROLES = frozenset({"test", "value", "unit"})
#: A csv profile's ``scope`` → what each row of the sheet is (the site document's member names).
SHEET_SCOPES: dict[str, Scope] = {"circuits": "circuit", "boards": "board", "installation": "installation"}
_NAME = re.compile(r"^[a-z0-9][a-z0-9_.-]{0,63}$")
_COMMON = {"name", "description", "kind", "decimal", "encoding", "comment", "defaults"}
_CSV_ONLY = {"layout", "delimiter", "columns", "tests", "only_mapped", "scope"}
_REGEX_ONLY = {"pattern", "groups"}
_LINES_ONLY = {"keys"}
_KIND_MEMBERS = {"csv": _CSV_ONLY, "regex": _REGEX_ONLY, "lines": _LINES_ONLY}
_ANY = SCOPE_NAMES["circuit"] | SCOPE_NAMES["board"] | SCOPE_NAMES["installation"]
_WHAT = {SCOPE_NAMES["circuit"]: "of a circuit record", SCOPE_NAMES["board"]: "of a board record",
         SCOPE_NAMES["installation"]: "of the installation record", _ANY: "of a circuit, board or "
         "installation record"}


def _escape(token: str) -> str:
    return token.replace("~", "~0").replace("/", "~1")


def _bad(pointer: str, reason: str) -> AdapterError:
    return AdapterError(f"{pointer or '/'}: {reason}", code="bad_profile", details={"pointer": pointer})


def _text(data: Mapping[str, Any], key: str, *, required: bool = False, default: str | None = None
          ) -> str | None:
    value = data.get(key, default)
    if value is None:
        if required:
            raise _bad(f"/{key}", "is required")
        return None
    if not isinstance(value, str):
        raise _bad(f"/{key}", "must be a string")
    return value


def _choice(data: Mapping[str, Any], key: str, choices: tuple[str, ...]) -> str | None:
    value = _text(data, key)
    if value is not None and value not in choices:
        raise _bad(f"/{key}", f"must be one of {', '.join(repr(c) for c in choices)}")
    return value


def _mapping(raw: Any, pointer: str, *, allow_roles: bool, names: frozenset[str]) -> dict[str, Any]:
    """One column/group/test entry: a field name (one of ``names``), or {"field", "unit", "scale"}."""
    entry = {"field": raw} if isinstance(raw, str) else raw
    if not isinstance(entry, dict):
        raise _bad(pointer, "must be a field name or an object with 'field'")
    extra = set(entry) - {"field", "unit", "scale"}
    if extra:
        raise _bad(f"{pointer}/{_escape(sorted(extra)[0])}", "is not a member of a column mapping")
    name = entry.get("field")
    if not isinstance(name, str):
        raise _bad(f"{pointer}/field", "is required and must be a string")
    if name not in names and not (allow_roles and name in LONG_ROLES):
        roles = " or a long-layout role (test, value, unit)" if allow_roles else ""
        raise _bad(f"{pointer}/field", f"{name!r} is not a field {_WHAT.get(names, 'of the record')}{roles}")
    unit = entry.get("unit")
    if unit is not None:
        if not isinstance(unit, str) or not unit.strip():
            raise _bad(f"{pointer}/unit", "must be a non-empty string")
        spec = _spec(name)
        if spec is None or spec.unit is None or spec.unit == "degC":
            raise _bad(f"{pointer}/unit", f"{name!r} takes no unit")
        try:
            unit_factor(unit, spec.unit)
        except (UnknownUnit, UnitMismatch) as exc:
            raise _bad(f"{pointer}/unit", str(exc)) from exc
    scale = entry.get("scale", 1.0)
    if isinstance(scale, bool) or not isinstance(scale, int | float) or not math.isfinite(scale) \
            or scale <= 0:
        raise _bad(f"{pointer}/scale", "must be a positive number")
    return {"field": name, "unit": unit, "scale": float(scale)}


def _spec(name: str) -> FieldSpec | None:
    """The spec of a field of any record (the unit is the same wherever a name is used)."""
    return FIELDS.get(name) or BOARD_FIELDS.get(name) or INSTALLATION_FIELDS.get(name)


def _entries(data: Mapping[str, Any], key: str, *, allow_roles: bool, required: bool,
             names: frozenset[str]) -> list[dict[str, Any]]:
    raw = data.get(key)
    if raw is None:
        if required:
            raise _bad(f"/{key}", "is required")
        return []
    if not isinstance(raw, dict):
        raise _bad(f"/{key}", "must be an object of source name → field")
    out: list[dict[str, Any]] = []
    seen: dict[str, str] = {}
    for source, mapping in raw.items():
        pointer = f"/{key}/{_escape(source)}"
        if not source.strip():
            raise _bad(pointer, "a source name must not be empty")
        if fold(source) in seen and key != "groups":
            raise _bad(pointer, f"folds to the same label as {seen[fold(source)]!r}")
        seen[fold(source)] = source
        out.append({"source": source, **_mapping(mapping, pointer, allow_roles=allow_roles, names=names)})
    return out


def _defaults(data: Mapping[str, Any], names: frozenset[str]) -> dict[str, str]:
    raw = data.get("defaults", {})
    if not isinstance(raw, dict):
        raise _bad("/defaults", "must be an object of field → text")
    for key, value in raw.items():
        if key not in names or key in NOTATION_INPUTS:
            raise _bad(f"/defaults/{_escape(key)}", f"{key!r} is not a field {_WHAT.get(names, '')}")
        if not isinstance(value, str):
            raise _bad(f"/defaults/{_escape(key)}", "must be a string")
    return dict(raw)


def parse_profile(data: Any) -> dict[str, Any]:
    """Checked keyword data for :class:`CsvProfile` / :class:`RegexProfile` (plus ``kind``)."""
    if not isinstance(data, dict):
        raise _bad("", "a profile must be a JSON object")
    kind = _choice(data, "kind", ("csv", "regex", "lines")) or "csv"
    allowed = _COMMON | _KIND_MEMBERS[kind]
    for key in data:
        if key not in allowed:
            raise _bad(f"/{_escape(key)}", f"is not a member of a {kind} profile")
    name = _text(data, "name", required=True)
    assert name is not None
    if not _NAME.match(name):
        raise _bad("/name", "must be 1–64 lower-case letters, digits, '_', '-' or '.'")
    encoding = _text(data, "encoding")
    if encoding is not None:
        try:
            codecs.lookup(encoding)
        except LookupError as exc:
            raise _bad("/encoding", f"unknown encoding {encoding!r}") from exc
    comment = _text(data, "comment", default="#")
    scope = _choice(data, "scope", tuple(SHEET_SCOPES)) if kind == "csv" else None
    # a csv sheet's columns are fields of its rows' record; other profiles name any field (a line
    # says itself whether it is a circuit's, a board's or the installation's)
    names = SCOPE_NAMES[SHEET_SCOPES[scope or "circuits"]] if kind == "csv" and scope else (
        _ANY if kind != "regex" else SCOPE_NAMES["circuit"])
    out: dict[str, Any] = {
        "kind": kind, "name": name, "description": _text(data, "description") or "",
        "decimal": _choice(data, "decimal", (".", ",")), "encoding": encoding,
        "comment": comment or "", "defaults": _defaults(data, names),
    }
    if kind == "csv":
        delimiter = _text(data, "delimiter")
        if delimiter is not None and (len(delimiter) != 1 or delimiter in "\r\n\"" or delimiter.isalnum()):
            raise _bad("/delimiter", "must be one character, not a letter, digit, quote or line end")
        only_mapped = data.get("only_mapped", False)
        if not isinstance(only_mapped, bool):
            raise _bad("/only_mapped", "must be true or false")
        out.update(layout=_choice(data, "layout", ("wide", "long")), delimiter=delimiter,
                   only_mapped=only_mapped, scope=scope,
                   columns=_entries(data, "columns", allow_roles=True, required=False, names=names),
                   tests=_entries(data, "tests", allow_roles=False, required=False, names=names))
        if out["decimal"] == "," and delimiter == ",":
            raise _bad("/decimal", "a decimal comma needs a delimiter other than ','")
        return out
    if kind == "lines":
        out["columns"] = _entries(data, "keys", allow_roles=False, required=False, names=names)
        return out
    pattern = _text(data, "pattern", required=True)
    assert pattern is not None
    try:
        compiled = compile_pattern(pattern)
    except PatternError as exc:
        raise _bad("/pattern", f"does not compile: {exc}") from exc
    groups = _entries(data, "groups", allow_roles=False, required=False, names=names)
    mapped = {g["source"] for g in groups}
    for group in compiled.groupindex:
        if group not in mapped and group not in FIELDS:
            raise _bad("/pattern", f"named group {group!r} is neither a field nor listed in 'groups'")
    for g in groups:
        if g["source"] not in compiled.groupindex:
            raise _bad(f"/groups/{_escape(g['source'])}", "names no group of the pattern")
    fields = {g["field"] for g in groups} | (set(compiled.groupindex) - mapped)
    if "circuit" not in fields and "circuit" not in out["defaults"]:
        raise _bad("/pattern", "needs a 'circuit' group (or a default circuit)")
    out.update(pattern=pattern, columns=groups)
    return out
