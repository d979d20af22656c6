"""Finding adapters: Python entry points, group ``ohmtally.adapters``.

The built-ins are registered the same way (pyproject.toml), so a third-party
package that declares, in its own metadata::

    [project.entry-points."ohmtally.adapters"]
    mylogger = "mylogger_ohmtally:MyLoggerAdapter"

appears in ``list_adapters()`` and ``GET /v1/adapters`` without any change here.

Invariants:
- Names are unique: where two distributions declare the same name, ohmtally's
  own wins, then the first in ``sys.path`` order; the loser is not listed.
- A plug-in that fails to import is left out of the listing and reported by
  ``get_adapter(name)`` as ``adapter_failed``: one broken plug-in never breaks
  the others.
- Discovery is cached per ``sys.path``: a package put on the path at run time
  (a test, a plug-in installed into a running shell) is seen on the next call.
- Should ohmtally run from a source tree without its metadata installed, the
  built-ins are still found (the same three names and classes).
"""

from __future__ import annotations

import sys
from importlib import metadata
from typing import Any

from .base import Adapter, AdapterError
from .profiles import list_profiles

__all__ = [
    "ENTRY_POINT_GROUP",
    "adapter_for_extension",
    "adapter_for_media_type",
    "adapter_names",
    "get_adapter",
    "list_adapters",
]

ENTRY_POINT_GROUP = "ohmtally.adapters"
_OWN_DISTRIBUTION = "ohmtally"
_BUILTINS = {
    "csv": "adapters.csv_adapter:CsvAdapter",
    "lines": "adapters.lines_adapter:LinesAdapter",
    "json": "adapters.json_adapter:JsonAdapter",
}
_PROFILE_KINDS: dict[str, tuple[str, ...]] = {"csv": ("csv",), "lines": ("regex", "lines")}

_cache: tuple[tuple[str, ...], dict[str, metadata.EntryPoint]] | None = None
_loaded: dict[tuple[str, str], Any] = {}


def _entry_points() -> dict[str, metadata.EntryPoint]:
    global _cache
    key = tuple(sys.path)
    if _cache is not None and _cache[0] == key:
        return _cache[1]
    found: dict[str, metadata.EntryPoint] = {}
    own: dict[str, metadata.EntryPoint] = {}
    for ep in metadata.entry_points(group=ENTRY_POINT_GROUP):
        dist = getattr(ep, "dist", None)
        if dist is not None and dist.metadata["Name"] == _OWN_DISTRIBUTION:
            own.setdefault(ep.name, ep)
        else:
            found.setdefault(ep.name, ep)
    for name, value in _BUILTINS.items():
        own.setdefault(name, metadata.EntryPoint(name=name, value=value, group=ENTRY_POINT_GROUP))
    merged = {**found, **own}
    _cache = (key, merged)
    return merged


def _load(ep: metadata.EntryPoint) -> Adapter:
    cache_key = (ep.name, ep.value)
    if cache_key in _loaded:
        return _loaded[cache_key]  # type: ignore[no-any-return]
    try:
        target = ep.load()
        adapter = target() if isinstance(target, type) else target
    except Exception as exc:  # a plug-in's own import errors are its own; report, do not crash
        raise AdapterError(f"adapter {ep.name!r} ({ep.value}) failed to load: {exc}",
                           code="adapter_failed", details={"adapter": ep.name}) from exc
    if not isinstance(adapter, Adapter):
        raise AdapterError(f"adapter {ep.name!r} ({ep.value}) does not follow the adapter protocol",
                           code="adapter_failed", details={"adapter": ep.name})
    _loaded[cache_key] = adapter
    return adapter


def _working() -> dict[str, Adapter]:
    out: dict[str, Adapter] = {}
    for name, ep in sorted(_entry_points().items()):
        try:
            out[name] = _load(ep)
        except AdapterError:
            continue
    return out


def adapter_names() -> list[str]:
    """Names of the adapters that load, sorted."""
    return sorted(_working())


def get_adapter(name: str) -> Adapter:
    """The adapter called ``name``; ``unknown_adapter`` lists the choices."""
    ep = _entry_points().get(name)
    if ep is None:
        raise AdapterError(f"unknown adapter {name!r}", code="unknown_adapter",
                           details={"choices": adapter_names()})
    return _load(ep)


def _pick(attribute: str, wanted: str, what: str) -> Adapter:
    """The adapter claiming ``wanted``; the built-ins first, so a plug-in cannot take over ``.csv``."""
    working = _working()
    ordered = sorted(working, key=lambda n: (n not in _BUILTINS, n))
    for name in ordered:
        if wanted in (v.lower() for v in getattr(working[name], attribute, ())):
            return working[name]
    raise AdapterError(f"no adapter reads {what} {wanted!r}", code="unknown_adapter",
                       details={"choices": adapter_names(), what.replace(" ", "_"): wanted})


def adapter_for_extension(suffix: str) -> Adapter:
    """``.csv`` → csv, ``.txt``/``.log`` → lines, ``.json`` → json (case-insensitive)."""
    wanted = suffix.lower().strip()
    if wanted and not wanted.startswith("."):
        wanted = "." + wanted
    return _pick("extensions", wanted, "extension")


def adapter_for_media_type(media_type: str) -> Adapter:
    """``text/csv`` → csv, ``text/plain`` → lines, ``application/json`` and NDJSON → json."""
    wanted = media_type.split(";", 1)[0].strip().lower()
    return _pick("media_types", wanted, "media type")


def list_adapters(profile_dir: str | None = None) -> list[dict[str, Any]]:
    """Each adapter: name, description, media types, extensions and the profiles it can use."""
    profiles = list_profiles(profile_dir)
    out: list[dict[str, Any]] = []
    for name, adapter in _working().items():
        own = getattr(adapter, "profile_kind", None)
        kinds = _PROFILE_KINDS.get(name) or ((own,) if own else ())
        out.append({
            "name": name,
            "description": adapter.description,
            "media_types": list(adapter.media_types),
            "extensions": list(adapter.extensions),
            "profiles": [p["name"] for p in profiles if p["kind"] in kinds],
        })
    return out
