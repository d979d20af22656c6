"""``python -m api.cli``: the ``ohmtally`` command without its console script."""

from __future__ import annotations

from api.cli import main

raise SystemExit(main())
