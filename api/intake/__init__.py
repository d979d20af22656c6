"""Readings in: a request body or a JSON document → records and what was rejected.

``bodies`` reads a whole request body (JSON circuits, or CSV / lines / NDJSON through
an adapter) into items that merge per circuit and field; ``objects`` turns JSON circuit
objects into engine records with a pointer for every bad field (the API and the
offline ``ohmtally verify`` share it).
"""

from __future__ import annotations

__all__: list[str] = []
