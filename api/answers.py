"""The body of a verify response, built in one place for the API and the CLI."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from engine import NOTICE, Ruleset, Verdict, summarise

__all__ = ["verify_body"]


def verify_body(ruleset: Ruleset, verdicts: Sequence[Verdict],
                rejected: Sequence[dict[str, Any]]) -> dict[str, Any]:
    return {
        "ruleset": ruleset.summary(),
        "summary": {**summarise(verdicts), "rejected": len(rejected)},
        "verdicts": [v.as_dict() for v in verdicts],
        "rejected": list(rejected),
        "notice": NOTICE,
    }
