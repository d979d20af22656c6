"""Board and circuit references: text a person typed, never bytes that failed to decode.

Invariants:
- :func:`key_problem` refuses a reference holding a control character (C0, DEL,
  C1), U+FFFD (the mark a decoder leaves where bytes were not text) or a lone
  surrogate (an escape such as ``\\ud800`` that is no character). Such a
  reference would key a circuit no person can name, so every adapter rejects
  its line (``bad_key``) instead of making a new circuit from noise. So is a
  word for an empty cell (``-``, ``none``, ``null``: :func:`engine.marks.is_blank`)
  or a cell word (``N/A``, ``LIM``: :func:`engine.marks.cell_mark`), which the
  engine's record builder reads as no reference at all.
"""

from __future__ import annotations

import re
from functools import lru_cache

from engine.marks import cell_mark, is_blank

__all__ = ["key_problem"]

_BAD = re.compile("[\x00-\x1f\x7f-\x9f\ufffd\ud800-\udfff]")


@lru_cache(maxsize=4096)  # a job names a few boards and circuits, on every row
def key_problem(name: str, text: str) -> str | None:
    """Why ``text`` cannot be a ``name`` (board or circuit) reference, or None."""
    if text.strip() and (is_blank(text) or cell_mark(text) is not None):
        return (f"the {name} reference {text.strip()!r} is a word for an empty cell or a cell word (N/A, "
                "LIM), not a reference")
    found = _BAD.search(text)
    if found is None:
        return None
    char = found.group()
    what = ("bytes that are not valid text in the input's encoding" if char == "\ufffd"
            else "a lone surrogate (not a character)" if "\ud800" <= char <= "\udfff"
            else f"the control character {ord(char):#04x}")
    return f"the {name} reference {text[:40]!r} holds {what} at position {found.start() + 1}"
