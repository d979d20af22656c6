"""ohmtally's API package: the Flask app, schemas, persistence, auth and the CLI.

The only package that does I/O beyond reading an adapter's input.
"""

from __future__ import annotations

__all__: list[str] = []
