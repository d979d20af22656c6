"""Which view answers an operation, the operation's id, and the parameters flask-smorest dropped.

Invariants:
- An operation's id is derived from its view, never written twice: the method, then the
  view class's name in snake case without a trailing repeat of the method
  (``JobVerdicts.get`` → ``get_job_verdicts``, ``JobPatch.patch`` → ``patch_job``). A route
  may set its own with ``@blp.doc(operationId=…)``; it is then kept.
- ``@blp.doc(parameters=[…])`` replaces, in flask-smorest's deep merge, the parameters that
  ``@blp.arguments(…, location="query")`` documents (a list is replaced, not merged): the
  query parameters of ``POST /v1/jobs/{job_id}/readings`` and ``GET …/verdicts`` vanished.
  :func:`restore_arguments` puts every dropped argument back before the marshmallow
  plugin expands it, so a view's every ``@blp.arguments`` is in the document.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from copy import copy
from typing import Any

from flask import Flask

__all__ = ["operation_id", "restore_arguments", "view_for"]

_BODY_LOCATIONS = frozenset({"json", "form", "files", "body"})
_WORD_START = re.compile(r"(?<=[a-z0-9])(?=[A-Z])")


def view_for(app: Flask, endpoint: str, method: str) -> Callable[..., Any] | None:
    """The function that answers ``method`` at ``endpoint``: a MethodView's method, or the view."""
    view = app.view_functions.get(endpoint)
    if view is None:
        return None
    cls = getattr(view, "view_class", None)
    if cls is None:
        return view
    found: Callable[..., Any] | None = getattr(cls, method.lower(), None)
    return found


def operation_id(app: Flask, endpoint: str, method: str) -> str:
    """``get_job_verdicts`` for ``JobVerdicts.get`` (see the module's invariants)."""
    view = app.view_functions.get(endpoint)
    cls = getattr(view, "view_class", None)
    name = cls.__name__ if cls is not None else endpoint.rpartition(".")[2]
    words = _WORD_START.sub("_", name).lower().split("_")
    if len(words) > 1 and words[-1] == method.lower():
        words = words[:-1]
    return "_".join([method.lower(), *words])


def restore_arguments(operation: dict[str, Any], view: Callable[..., Any] | None) -> None:
    """Append the view's ``@blp.arguments`` parameters (query, headers, path) the manual doc dropped.

    The entries keep flask-smorest's form (``{"in": …, "schema": <Schema>}``), which the
    marshmallow plugin expands into one parameter per field after this runs.
    """
    apidoc: Mapping[str, Any] = getattr(view, "_apidoc", None) or {}
    manual = (apidoc.get("manual_doc") or {}).get("parameters")
    declared = (apidoc.get("arguments") or {}).get("parameters") or []
    if manual is None or not declared:
        return  # nothing was replaced: flask-smorest documented the arguments itself
    present = operation.setdefault("parameters", [])
    for entry in declared:
        if not isinstance(entry, Mapping) or entry.get("in") in _BODY_LOCATIONS:
            continue
        if any(item is entry or (isinstance(item, Mapping) and item.get("schema") is entry.get("schema"))
               for item in present):
            continue
        present.append({key: value for key, value in copy(dict(entry)).items() if key != "required"})
