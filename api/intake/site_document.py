"""A JSON site document → circuit records, the installation and boards, what was refused, and
what was read as nothing.

A site document is ``{"ruleset"?, "installation"?, "boards"?, "circuits"?}`` (a bare list of
circuit objects is read as ``{"circuits": [...]}``). It is the JSON body of ``POST /v1/verify``
and of a readings post, and the file ``ohmtally verify site.json`` reads: all three read it
here, so they take and refuse the same things with the same pointers.

Invariants:
- A member whose name no part of the document knows (a typo such as ``zss_ohm``, a field
  of another record) is read as nothing and said out loud: a warning with its JSON
  pointer, the same account the CSV and lines adapters give for an unknown column or key
  (``unknown_field`` with a "did you mean", ``ambiguous_label``, ``other_scope``). It is
  not a refusal: the rest of the object is taken.
- A known member with a value of the wrong JSON type is refused by the schema, a value
  the engine cannot read (a unit that does not fit, an unparseable notation, a design
  value at or below zero) by the engine; each is a rejection with its pointer. The
  callers keep JSON all or nothing: any rejection refuses the whole document.
- Nothing here raises for what a document holds; only a document that is no object or
  list at all is refused (``bad_document``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

from marshmallow import ValidationError

from adapters.aliases import resolve_label
from adapters.name_notes import name_warning
from api.errors import escape_pointer, messages_to_errors
from api.intake.objects import records_from_objects
from api.schemas.records import KNOWN_NAMES, load_verify_request
from engine import (
    BoardRecord,
    CircuitRecord,
    InstallationRecord,
    Site,
    board_to_dict,
    build_site,
    installation_to_dict,
)

__all__ = ["FactPart", "SiteDocument", "read_site_document"]


@dataclass(frozen=True, slots=True)
class FactPart:
    """The installation's or one board's facts as the document states them (JSON form)."""

    scope: str  # installation | board
    board: str  # "" for the installation
    fields: Mapping[str, Any]
    location: str  # the JSON pointer of the object


@dataclass(slots=True)
class SiteDocument:
    ruleset: str | None = None
    records: list[CircuitRecord] = field(default_factory=list)
    facts: list[FactPart] = field(default_factory=list)
    site: Site = field(default_factory=Site)
    rejected: list[dict[str, Any]] = field(default_factory=list)
    # "shape": the document's JSON types or structure (the schema); "values": values the engine refused
    refused_for: str = "values"
    warnings: list[dict[str, Any]] = field(default_factory=list)


_SCOPES: dict[str, Literal["circuit", "board", "installation"]] = {
    "document": "circuit", "circuit": "circuit", "board": "board", "installation": "installation"}


def _warning(name: str, pointer: str, scope: str) -> dict[str, Any]:
    label = resolve_label(name)
    found = name_warning(name, label, line=0, pointer=pointer, scope=_SCOPES[scope]).as_dict()
    found.pop("line", None)  # a JSON document has pointers, not lines
    return found


def _known_only(value: Any, scope: str, pointer: str, warnings: list[dict[str, Any]]) -> Any:
    """``value`` without the members ``scope`` does not know, each reported once by its pointer."""
    if not isinstance(value, Mapping):
        return value
    known = KNOWN_NAMES[scope]
    kept: dict[str, Any] = {}
    for name, member in value.items():
        if name in known:
            kept[name] = member
        else:
            warnings.append(_warning(name, f"{pointer}/{escape_pointer(name)}", scope))
    return kept


def _split_unknown(document: Mapping[str, Any], warnings: list[dict[str, Any]]) -> dict[str, Any]:
    clean: dict[str, Any] = _known_only(document, "document", "", warnings)
    if "installation" in clean:
        clean["installation"] = _known_only(clean["installation"], "installation", "/installation", warnings)
    for part, scope in (("boards", "board"), ("circuits", "circuit")):
        items = clean.get(part)
        if isinstance(items, list):
            clean[part] = [_known_only(item, scope, f"/{part}/{index}", warnings)
                           for index, item in enumerate(items)]
    return clean


def _facts(installation: InstallationRecord | None, boards: Mapping[str, BoardRecord],
           pointers: Mapping[str, str]) -> list[FactPart]:
    out: list[FactPart] = []
    if installation is not None:
        out.append(FactPart("installation", "", installation_to_dict(installation), "/installation"))
    for name, board in boards.items():
        fields = board_to_dict(board)
        fields.pop("board", None)
        out.append(FactPart("board", name, fields, pointers.get(name, "/boards")))
    return out


def read_site_document(document: Any) -> SiteDocument:
    """The document's parts, each refused value with its pointer and each unknown name as a warning."""
    found = SiteDocument()
    if isinstance(document, list):
        document = {"circuits": document}
    if not isinstance(document, Mapping):
        found.rejected.append({"pointer": "", "code": "bad_document",
                               "reason": "expected a site document (an object with circuits, installation "
                                         "and boards) or a list of circuits"})
        found.refused_for = "shape"
        return found
    clean = _split_unknown(document, found.warnings)
    try:
        loaded = load_verify_request(clean)
    except ValidationError as exc:
        found.rejected.extend(messages_to_errors(exc.messages))
        found.refused_for = "shape"
        return found
    if not {"circuits", "installation", "boards"} & set(clean):  # (an empty list of circuits is a statement)
        found.rejected.append({"pointer": "", "code": "nothing_stated",
                               "reason": "the document states no circuit, installation or board"})
        found.refused_for = "shape"
        return found
    found.ruleset = loaded.get("ruleset")
    found.records, rejected = records_from_objects(loaded.get("circuits", []), pointer="/circuits")
    found.rejected.extend(rejected)
    site, errors = build_site(loaded)
    found.rejected.extend(error.as_dict() for error in errors)
    found.site = site
    pointers = {str(b.get("board")): f"/boards/{i}" for i, b in enumerate(loaded.get("boards") or [])
                if isinstance(b, Mapping)}
    found.facts = _facts(site.installation, site.boards, pointers)
    return found
