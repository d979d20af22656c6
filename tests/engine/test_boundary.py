"""The engine's boundary (engine/README.md): no framework or I/O library is imported."""

from __future__ import annotations

import subprocess
import sys

FORBIDDEN = ("flask", "sqlalchemy", "marshmallow", "serial", "adapters", "api", "httpx", "psycopg",
             "requests", "gunicorn")


def test_engine_imports_no_framework_or_io_library() -> None:
    """Importing engine and running a verification pulls in none of the forbidden modules."""
    code = (
        "import sys, engine\n"
        "r, _ = engine.build_record({'board': 'B', 'circuit': '1', 'zs_ohm': '0.5 Ω'})\n"
        "engine.verify([r])\n"
        f"bad = [m for m in {FORBIDDEN!r} if m in sys.modules]\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"engine imported: {out.stdout.strip()}"
