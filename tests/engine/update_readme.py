"""``python -m tests.engine.update_readme``: rewrite the generated tables of engine/README.md.

The engine does no I/O, so the writing lives here; ``engine.docs.splice`` makes
the text and ``tests/engine/test_readme.py`` checks the README is current.
"""

from __future__ import annotations

import sys
from pathlib import Path

from engine.docs import splice

__all__ = ["README", "main"]

README = Path(__file__).resolve().parents[2] / "engine" / "README.md"


def main() -> int:
    text = README.read_text(encoding="utf-8")
    new = splice(text)
    if new != text:
        README.write_text(new, encoding="utf-8")
        print(f"rewrote the generated tables of {README}")
    else:
        print(f"{README} is current")
    return 0


if __name__ == "__main__":
    sys.exit(main())
