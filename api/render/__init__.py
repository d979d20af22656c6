"""Rendering a verify body: json for programs, junit and csv for pipelines, table and html for people.

``render(body, fmt, policy) -> (text, media_type)`` is shared by ``ohmtally
verify --format`` and ``POST /v1/verify?format=``, so both give the same bytes.

Invariants:
- ``json`` is exactly the body (the policy does not touch it: the body already
  says every outcome; the caller's policy is theirs to apply).
- ``junit``, ``table`` and ``html`` show the policy; ``csv`` is policy-free data.
- Rendering never raises on what a readings file holds (names, details).
- Every rendered output carries the safety notice: json in ``notice``, table
  and junit in their text, html at its top and foot and on every printed page;
  csv has no place for prose, so its callers put the notice beside it (stderr, an ``Ohmtally-Notice`` header).
- ``descriptions`` (``(board, circuit)`` → the circuit's description) lets the
  table, JUnit and html show what each circuit is when the body does not say.
- ``HTML_STYLE_SOURCE`` is the CSP ``style-src`` source that allows the html
  page's inline stylesheet and nothing else.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from datetime import datetime
from typing import Any

from .csv_out import CSV_COLUMNS, neutralise, render_csv
from .html import MEDIA_TYPE as HTML_MEDIA_TYPE
from .html import STYLE_SOURCE as HTML_STYLE_SOURCE
from .html import render_html
from .junit import render_junit
from .policy import (
    DEFAULT_POLICY,
    FAIL_ON_CHOICES,
    WARN_ON_CHOICES,
    Policy,
    PolicyError,
    Treatment,
    policy_from_names,
)
from .table import render_table, rich_table

__all__ = [
    "CSV_COLUMNS",
    "DEFAULT_POLICY",
    "FAIL_ON_CHOICES",
    "FORMATS",
    "HTML_STYLE_SOURCE",
    "MEDIA_TYPES",
    "WARN_ON_CHOICES",
    "Policy",
    "PolicyError",
    "Treatment",
    "neutralise",
    "policy_from_names",
    "render",
    "rich_table",
]

FORMATS: tuple[str, ...] = ("table", "json", "junit", "csv", "html")

MEDIA_TYPES: dict[str, str] = {
    "table": "text/plain; charset=utf-8",
    "json": "application/json",
    # No registered type for JUnit XML; RFC 7303's generic XML type is what CI servers accept.
    "junit": "application/xml",
    # RFC 4180 §3 / RFC 7111: the header parameter says the first row names the columns.
    "csv": "text/csv; charset=utf-8; header=present",
    "html": HTML_MEDIA_TYPE,
}


Descriptions = Mapping[tuple[str, str], str]


def _json(body: dict[str, Any], policy: Policy, generated_at: datetime | None,
          descriptions: Descriptions | None) -> str:
    return json.dumps(body, ensure_ascii=False, indent=2) + "\n"


_RENDERERS: dict[str, Callable[[dict[str, Any], Policy, datetime | None, Descriptions | None], str]] = {
    "json": _json,
    "junit": lambda body, policy, when, names: render_junit(body, policy, generated_at=when,
                                                            descriptions=names),
    "csv": lambda body, policy, when, names: render_csv(body),
    "table": lambda body, policy, when, names: render_table(body, policy, names),
    "html": lambda body, policy, when, names: render_html(body, policy, names),
}


def render(body: dict[str, Any], fmt: str, policy: Policy = DEFAULT_POLICY, *,
           generated_at: datetime | None = None,
           descriptions: Descriptions | None = None) -> tuple[str, str]:
    """The body as ``fmt``, with its media type; ``ValueError`` for an unknown format.

    ``generated_at`` stamps the JUnit suites (default: now, UTC); ``descriptions``
    maps ``(board, circuit)`` to the circuit's description for table, JUnit and html.
    """
    try:
        renderer = _RENDERERS[fmt]
    except KeyError:
        raise ValueError(f"format must be one of {', '.join(FORMATS)}, not {fmt!r}") from None
    return renderer(body, policy, generated_at, descriptions), MEDIA_TYPES[fmt]
