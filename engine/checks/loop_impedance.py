"""Placeholder: the loop_impedance check is being written (see the open issues)."""

from __future__ import annotations

from collections.abc import Iterator

from ..context import CircuitView, Context
from ..results import CheckResult

__all__ = ["run"]


def run(view: CircuitView, ctx: Context) -> Iterator[CheckResult]:
    yield from ()
