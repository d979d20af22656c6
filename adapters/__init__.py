"""ohmtally's adapters: bytes or text lines from meters and loggers → record fragments.

Imports point one way: ``api -> adapters -> engine``; nothing here imports ``api``.
"""

from __future__ import annotations

from .base import (
    Adapter,
    AdapterError,
    AdapterOptions,
    BoardFacts,
    Fragment,
    InputWarning,
    InstallationFacts,
    LineError,
    Result,
    Skipped,
)
from .collect import Collected, SiteFacts, collect, iter_records

__all__ = [
    "Adapter",
    "AdapterError",
    "AdapterOptions",
    "BoardFacts",
    "Collected",
    "Fragment",
    "InputWarning",
    "InstallationFacts",
    "LineError",
    "Result",
    "SiteFacts",
    "Skipped",
    "collect",
    "iter_records",
]
