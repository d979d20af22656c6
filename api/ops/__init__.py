"""Running several hosts on one database: what ``ohmtally serve`` prepares before its workers start.

``multiprocess`` gives the workers of one server a shared folder for their metrics;
``agreement`` checks that the settings every host must share agree with what the
database recorded. Neither is imported by the app itself: ``ohmtally serve`` calls them.
"""

from __future__ import annotations

__all__: list[str] = []
