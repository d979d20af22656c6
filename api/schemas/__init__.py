"""marshmallow schemas, one module per resource; they validate requests and document responses.

Response bodies are built by the views (``api.answers.verify_body`` for verdicts)
and returned as-is; the response schemas describe them for the OpenAPI document,
and the tests check every response against that document.
"""

from __future__ import annotations

from api.schemas.fields import JsonTypes, json_types_attribute

__all__ = ["JsonTypes", "json_types_attribute"]
