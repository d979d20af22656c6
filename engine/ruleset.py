"""Rulesets: every limit, factor and table the checks use, each with its source.

A ruleset is data. The built-in ones are folders under ``engine/rulesets/``: a
``ruleset.json`` with ``id``, ``title``, ``edition``, ``description`` and the
``sources`` it relies on, and one ``<section>.json`` per rule family, each a
mapping ``key -> entry``. An entry is::

    {"value": <number | text | table>, "source": "<standard, table or clause>",
     "marker": "standard" | "secondary" | "memory" | "practice" | "derived",
     "note": "<optional>"}

Markers say how sure the figure is: ``standard`` the standard's own figure;
``secondary`` confirmed in a secondary source that transcribes the standard or
a handbook; ``memory`` recalled, not confirmed; ``practice`` common practice
with no published source; ``derived`` derived from the formula the source
names. The one-letter codes of earlier releases (``S``, ``C2``, ``M``, ``CP``,
``D``) are still read in a user's file and become these words. Keys starting
with ``_`` are comments.

A user's ruleset (local codes) is one JSON document of the same shape with the
sections under ``"sections"`` and an optional ``"base"``: the id of a built-in
ruleset whose entries it overrides one by one. The caller reads the file; this
module only validates data (the engine does no I/O beyond its packaged data).
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Any

from .errors import RulesetError

__all__ = [
    "DEFAULT_RULESET",
    "LEGACY_MARKERS",
    "MARKERS",
    "Entry",
    "Ruleset",
    "builtin_ruleset_ids",
    "load_builtin",
    "load_ruleset",
    "ruleset_from_data",
]

DEFAULT_RULESET = "bs7671-2018-a2"

MARKERS: dict[str, str] = {
    "standard": "the standard's own figure",
    "secondary": "confirmed in a secondary source that transcribes the standard or a handbook",
    "memory": "from memory, not confirmed",
    "practice": "common practice, no published source",
    "derived": "derived from the formula its source names",
}
#: One-letter codes of earlier releases, still read in a user's ruleset file.
LEGACY_MARKERS: dict[str, str] = {"S": "standard", "C2": "secondary", "M": "memory",
                                  "CP": "practice", "D": "derived"}


@dataclass(frozen=True, slots=True, kw_only=True)
class Entry:
    value: Any
    source: str
    marker: str
    note: str | None = None

    def as_dict(self) -> dict[str, Any]:
        out = {"value": self.value, "source": self.source, "marker": self.marker,
               "marker_meaning": MARKERS[self.marker]}
        if self.note:
            out["note"] = self.note
        return out


_NO_SECTION: Mapping[str, Entry] = {}


@dataclass(frozen=True, slots=True, kw_only=True)
class Ruleset:
    id: str
    title: str
    edition: str = ""
    description: str = ""
    version: str = "1"
    base: str | None = None
    sources: Mapping[str, str] = field(default_factory=dict)
    sections: Mapping[str, Mapping[str, Entry]] = field(default_factory=dict)

    def has(self, section: str, key: str) -> bool:
        return key in self.sections.get(section, {})

    def entry(self, section: str, key: str) -> Entry:
        try:
            return self.sections[section][key]
        except KeyError:
            raise RulesetError(
                f"ruleset {self.id!r} has no value {section}.{key}", field=f"{section}.{key}"
            ) from None

    # value/get/basis are called a few dozen times per circuit: one inlined lookup each.
    def value(self, section: str, key: str) -> Any:
        try:
            return self.sections[section][key].value
        except KeyError:
            return self.entry(section, key).value  # raises the RulesetError naming the value

    def get(self, section: str, key: str, default: Any = None) -> Any:
        found = self.sections.get(section, _NO_SECTION).get(key)
        return default if found is None else found.value

    def basis(self, section: str, key: str) -> str:
        try:
            return self.sections[section][key].source
        except KeyError:
            return self.entry(section, key).source

    def summary(self) -> dict[str, Any]:
        return {"id": self.id, "title": self.title, "edition": self.edition,
                "version": self.version, "description": self.description, "base": self.base}

    def as_dict(self) -> dict[str, Any]:
        out = self.summary()
        out["sources"] = dict(self.sources)
        out["sections"] = {
            name: {key: entry.as_dict() for key, entry in entries.items()}
            for name, entries in self.sections.items()
        }
        return out


def _entry(pointer: str, raw: Any) -> Entry:
    if not isinstance(raw, Mapping):
        raise RulesetError(f"{pointer}: an entry must be an object with value and source",
                           field=pointer)
    unknown = set(raw) - {"value", "source", "marker", "note"}
    if unknown:
        raise RulesetError(f"{pointer}: unknown keys {sorted(unknown)}", field=pointer)
    if "value" not in raw:
        raise RulesetError(f"{pointer}: missing 'value'", field=pointer)
    source = raw.get("source")
    if not isinstance(source, str) or not source.strip():
        raise RulesetError(f"{pointer}: every value needs a 'source'", field=pointer)
    marker = raw.get("marker", "standard")
    marker = LEGACY_MARKERS.get(marker, marker) if isinstance(marker, str) else marker
    if marker not in MARKERS:
        raise RulesetError(f"{pointer}: marker {marker!r} is not one of {sorted(MARKERS)}",
                           field=pointer)
    note = raw.get("note")
    if note is not None and not isinstance(note, str):
        raise RulesetError(f"{pointer}: 'note' must be text", field=pointer)
    return Entry(value=raw["value"], source=source, marker=marker, note=note)


def _sections(raw: Any, pointer: str) -> dict[str, dict[str, Entry]]:
    if not isinstance(raw, Mapping):
        raise RulesetError(f"{pointer}: must be an object of sections", field=pointer)
    out: dict[str, dict[str, Entry]] = {}
    for name, entries in raw.items():
        if str(name).startswith("_"):
            continue
        if not isinstance(entries, Mapping):
            raise RulesetError(f"{pointer}/{name}: a section must be an object", field=pointer)
        out[name] = {
            key: _entry(f"{pointer}/{name}/{key}", value)
            for key, value in entries.items()
            if not str(key).startswith("_")
        }
    return out


def ruleset_from_data(data: Any, *, origin: str = "ruleset") -> Ruleset:
    """Validate a ruleset document (a user's file, already parsed) and build it.

    With ``"base"``, the document's entries override the base ruleset's one by one.
    """
    if not isinstance(data, Mapping):
        raise RulesetError(f"{origin}: a ruleset must be a JSON object", field="/")
    unknown = set(data) - {"id", "title", "edition", "description", "version", "base",
                           "sources", "sections"}
    if unknown:
        raise RulesetError(f"{origin}: unknown keys {sorted(unknown)}", field="/")
    rid = data.get("id")
    if not isinstance(rid, str) or not rid.strip():
        raise RulesetError(f"{origin}: 'id' is required", field="/id")
    title = data.get("title")
    if not isinstance(title, str) or not title.strip():
        raise RulesetError(f"{origin}: 'title' is required", field="/title")
    sources = data.get("sources", {})
    if not isinstance(sources, Mapping) or not all(isinstance(v, str) for v in sources.values()):
        raise RulesetError(f"{origin}: 'sources' must map ids to titles", field="/sources")
    sections = _sections(data.get("sections", {}), "/sections")
    base_id = data.get("base")
    merged_sources: dict[str, str] = {}
    if base_id is not None:
        if base_id not in builtin_ruleset_ids():
            raise RulesetError(
                f"{origin}: base {base_id!r} is not a built-in ruleset "
                f"({', '.join(builtin_ruleset_ids())})", field="/base")
        base = load_builtin(base_id)
        merged: dict[str, dict[str, Entry]] = {k: dict(v) for k, v in base.sections.items()}
        for name, entries in sections.items():
            merged.setdefault(name, {}).update(entries)
        sections = merged
        merged_sources.update(base.sources)
    merged_sources.update(sources)
    return Ruleset(
        id=rid,
        title=title,
        edition=str(data.get("edition", "")),
        description=str(data.get("description", "")),
        version=str(data.get("version", "1")),
        base=base_id,
        sources=merged_sources,
        sections=sections,
    )


def _package_dir() -> Any:
    return resources.files("engine").joinpath("rulesets")


@lru_cache(maxsize=1)
def builtin_ruleset_ids() -> tuple[str, ...]:
    return tuple(sorted(p.name for p in _package_dir().iterdir()
                        if p.is_dir() and p.joinpath("ruleset.json").is_file()))


@lru_cache(maxsize=16)
def load_builtin(ruleset_id: str) -> Ruleset:
    """A packaged ruleset by id; raises :class:`RulesetError` naming the valid ids."""
    if ruleset_id not in builtin_ruleset_ids():
        raise RulesetError(
            f"unknown ruleset {ruleset_id!r}; built-in: {', '.join(builtin_ruleset_ids())}",
            field="ruleset", text=ruleset_id)
    folder = _package_dir().joinpath(ruleset_id)
    meta = json.loads(folder.joinpath("ruleset.json").read_text(encoding="utf-8"))
    sections: dict[str, Any] = {}
    for item in sorted(folder.iterdir(), key=lambda p: p.name):
        if item.name.endswith(".json") and item.name != "ruleset.json":
            sections[item.name[: -len(".json")]] = json.loads(item.read_text(encoding="utf-8"))
    meta = {k: v for k, v in meta.items() if not k.startswith("_")}
    meta["sections"] = sections
    built = ruleset_from_data(meta, origin=f"built-in ruleset {ruleset_id}")
    if built.id != ruleset_id:
        raise RulesetError(f"built-in ruleset folder {ruleset_id!r} declares id {built.id!r}")
    return built


def load_ruleset(ruleset: str | Ruleset | None = None) -> Ruleset:
    """A ruleset object from an id (``None`` → the default) or pass one through."""
    if isinstance(ruleset, Ruleset):
        return ruleset
    return load_builtin(ruleset or DEFAULT_RULESET)
