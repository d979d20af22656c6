"""JSON circuit objects → records, with a JSON pointer for every bad field.

Shared by ``POST /v1/verify`` and the offline ``ohmtally verify``, so both
reject the same things with the same pointers.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from engine import CircuitRecord, build_record

__all__ = ["Rejected", "records_from_objects"]

Rejected = dict[str, Any]


def records_from_objects(
    circuits: Sequence[Any], *, pointer: str = "/circuits"
) -> tuple[list[CircuitRecord], list[Rejected]]:
    """Build records; each bad field is one rejection ``{pointer, code, reason, text?}``.

    A circuit with a bad field is still built from its good fields (the bad one
    is absent, so the checks needing it say ``incomplete``); one without
    ``board``/``circuit`` is not built at all.
    """
    records: list[CircuitRecord] = []
    rejected: list[Rejected] = []
    for index, item in enumerate(circuits):
        where = f"{pointer}/{index}"
        if not isinstance(item, dict):
            rejected.append({"pointer": where, "code": "not_an_object",
                             "reason": "each circuit must be a JSON object"})
            continue
        record, errors = build_record(item, source=where)
        for error in errors:
            entry: Rejected = {"pointer": f"{where}/{_escape(error.field)}", "code": error.code,
                               "reason": error.reason}
            if error.text is not None:
                entry["text"] = error.text
            rejected.append(entry)
        if record is not None:
            records.append(record)
    return records, rejected


def _escape(token: str) -> str:
    """RFC 6901: ``~`` → ``~0``, ``/`` → ``~1``."""
    return token.replace("~", "~0").replace("/", "~1")
