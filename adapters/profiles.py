"""Mapping profiles: JSON documents that tell an adapter how a meter lays out its data.

Invariants:
- A profile is validated entirely when it is loaded; a bad one raises
  :class:`AdapterError` ``bad_profile`` with a JSON Pointer to the bad member,
  before any input is read. Units are checked against their field's dimension
  then, so a typo in a profile is caught once, not once per row.
- Profiles come from two places: the built-ins in ``adapters/profiles/*.json``
  and a user's directory (``AdapterOptions.profile_dir``, else the
  ``OHMTALLY_PROFILE_DIR`` environment variable). A user's profile with a
  built-in's name replaces it (a firm may tune our example layouts).
- ``kind`` is ``csv`` (the default), ``regex`` or ``lines``; an adapter asks
  only for the kinds it reads (the ``lines`` adapter: ``regex`` and ``lines``).
- Loaded profiles are cached by (file, modification time): editing a profile
  takes effect without a restart, and a million rows do not reread it.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Any, Literal

from .base import AdapterError
from .profile_schema import parse_profile

__all__ = [
    "PROFILE_DIR_ENV",
    "ColumnSpec",
    "CsvProfile",
    "LinesProfile",
    "Profile",
    "RegexProfile",
    "get_profile",
    "list_profiles",
    "load_profile_file",
]

PROFILE_DIR_ENV = "OHMTALLY_PROFILE_DIR"
ProfileKind = Literal["csv", "regex", "lines"]


@dataclass(frozen=True, slots=True, kw_only=True)
class ColumnSpec:
    """Where one source column (or regex group, or long-layout test) goes."""

    source: str
    field: str  # a record field, or a long-layout role: test, value, unit
    unit: str | None = None
    scale: float = 1.0


@dataclass(frozen=True, slots=True, kw_only=True)
class CsvProfile:
    name: str
    description: str
    origin: str
    layout: Literal["wide", "long"] | None = None
    delimiter: str | None = None
    decimal: Literal[".", ","] | None = None
    encoding: str | None = None
    comment: str = "#"
    columns: tuple[ColumnSpec, ...] = ()
    tests: tuple[ColumnSpec, ...] = ()
    defaults: dict[str, str] = field(default_factory=dict)
    only_mapped: bool = False  # ignore columns the profile does not name
    scope: Literal["circuits", "boards", "installation"] | None = None  # what each row is (None: found)
    kind: Literal["csv"] = "csv"


@dataclass(frozen=True, slots=True, kw_only=True)
class RegexProfile:
    name: str
    description: str
    origin: str
    pattern: str
    groups: tuple[ColumnSpec, ...] = ()
    decimal: Literal[".", ","] | None = None
    encoding: str | None = None
    comment: str = "#"
    defaults: dict[str, str] = field(default_factory=dict)
    kind: Literal["regex"] = "regex"


@dataclass(frozen=True, slots=True, kw_only=True)
class LinesProfile:
    """Our key=value line format as one logger writes it: its key names, decimals, encoding."""

    name: str
    description: str
    origin: str
    keys: tuple[ColumnSpec, ...] = ()
    decimal: Literal[".", ","] | None = None
    encoding: str | None = None
    comment: str = "#"
    defaults: dict[str, str] = field(default_factory=dict)
    kind: Literal["lines"] = "lines"


Profile = CsvProfile | RegexProfile | LinesProfile
_cache: dict[tuple[str, float], Profile] = {}


def load_profile_file(path: str | os.PathLike[str], *, origin: str | None = None) -> Profile:
    """Read and validate one profile file (``bad_profile`` on any problem)."""
    where = str(path)
    try:
        stamp = os.stat(where).st_mtime
    except OSError as exc:
        raise AdapterError(f"cannot read profile {where}: {exc.strerror}", code="bad_profile",
                           details={"file": where, "pointer": ""}) from exc
    hit = _cache.get((where, stamp))
    if hit is not None:
        return hit
    try:
        with open(where, "rb") as handle:
            data = json.loads(handle.read().decode("utf-8-sig"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise AdapterError(f"profile {where} is not a readable JSON document: {exc}",
                           code="bad_profile", details={"file": where, "pointer": ""}) from exc
    profile = _build(data, origin or where, where)
    _cache[(where, stamp)] = profile
    return profile


def _build(data: Any, origin: str, where: str) -> Profile:
    try:
        parsed = parse_profile(data)
    except AdapterError as exc:
        exc.details.setdefault("file", where)
        exc.message = f"profile {where}: {exc.message}"
        exc.args = (exc.message,)
        raise
    kind = parsed.pop("kind")
    parsed["origin"] = origin
    parsed[{"csv": "columns", "regex": "groups", "lines": "keys"}[kind]] = tuple(
        ColumnSpec(**c) for c in parsed.pop("columns"))
    if kind == "lines":
        return LinesProfile(**parsed)
    if kind == "csv":
        parsed["tests"] = tuple(ColumnSpec(**t) for t in parsed["tests"])
        return CsvProfile(**parsed)
    parsed.pop("tests", None)
    parsed.pop("layout", None)
    parsed.pop("delimiter", None)
    parsed.pop("only_mapped", None)
    return RegexProfile(**parsed)


def _profile_files(profile_dir: str | None) -> list[tuple[Path, str]]:
    """(file, origin) pairs, built-ins first so a user's file of the same name wins."""
    files: list[tuple[Path, str]] = []
    builtin = resources.files("adapters") / "profiles"
    if builtin.is_dir():
        for entry in sorted(builtin.iterdir(), key=lambda e: e.name):
            if entry.name.endswith(".json"):
                files.append((Path(str(entry)), "builtin"))
    user_dir = profile_dir if profile_dir is not None else os.environ.get(PROFILE_DIR_ENV)
    if user_dir:
        base = Path(user_dir)
        if not base.is_dir():
            raise AdapterError(f"profile directory {user_dir} does not exist", code="bad_profile",
                               details={"profile_dir": user_dir})
        files.extend((p, "user") for p in sorted(base.glob("*.json")))
    return files


def _all(profile_dir: str | None) -> dict[str, Profile]:
    found: dict[str, Profile] = {}
    for path, origin in _profile_files(profile_dir):
        profile = load_profile_file(path, origin=origin)
        found[profile.name] = profile
    return found


def get_profile(name: str, *, kind: ProfileKind | tuple[ProfileKind, ...],
                profile_dir: str | None = None) -> Profile:
    """The profile called ``name`` of ``kind`` (or one of several); ``unknown_profile`` lists the choices."""
    kinds = (kind,) if isinstance(kind, str) else kind
    found = {n: p for n, p in _all(profile_dir).items() if p.kind in kinds}
    if name in found:
        return found[name]
    path = Path(name)
    if path.suffix == ".json" and path.is_file():  # a profile given as a file path
        profile = load_profile_file(path, origin="file")
        if profile.kind in kinds:
            return profile
    raise AdapterError(f"unknown {' or '.join(kinds)} profile {name!r}", code="unknown_profile",
                       details={"choices": sorted(found)})


def list_profiles(profile_dir: str | None = None) -> list[dict[str, Any]]:
    """Every profile: name, kind, description, origin, and layout for CSV profiles."""
    out: list[dict[str, Any]] = []
    for profile in sorted(_all(profile_dir).values(), key=lambda p: p.name):
        item: dict[str, Any] = {"name": profile.name, "kind": profile.kind,
                                "description": profile.description, "origin": profile.origin}
        if isinstance(profile, CsvProfile):
            item["layout"] = profile.layout or "auto"
            item["scope"] = profile.scope or "auto"
        out.append(item)
    return out
