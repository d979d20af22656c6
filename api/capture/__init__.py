"""``ohmtally capture``: serial port → local spool → API, store and forward.

Modules: ``spool`` (the durable SQLite spool), ``policy`` (pure retry and
batching rules), ``forwarder`` (spool → API, one step at a time),
``transport`` (the HTTP call), ``reader`` (port → spool, reconnecting),
``status`` (what the person sees), ``runner`` (the threads and Ctrl-C).
See ``README.md`` beside this file.
"""

from __future__ import annotations

__all__: list[str] = []
