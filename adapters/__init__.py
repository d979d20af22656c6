"""ohmtally's adapters: bytes or text lines from meters and loggers → record fragments.

Imports point one way: ``api -> adapters -> engine``; nothing here imports ``api``.
"""

from __future__ import annotations

from .base import Adapter, AdapterError, AdapterOptions, Fragment, InputWarning, LineError, Result, Skipped
from .collect import Collected, collect, iter_records

__all__ = [
    "Adapter",
    "AdapterError",
    "AdapterOptions",
    "Collected",
    "Fragment",
    "InputWarning",
    "LineError",
    "Result",
    "Skipped",
    "collect",
    "iter_records",
]
