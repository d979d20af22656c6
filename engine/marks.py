"""The cell words ``N/A`` and ``LIM`` as marks a record remembers, and what else means "absent".

A schedule of test results writes ``N/A`` where a test does not apply and
``LIM`` where a limitation was recorded and the item was not tested. Either
may stand in any field of a circuit, board or installation record.

Invariants:
- One table says what a cell's text means before any field reads it
  (:func:`cell_mark`), for every intake:
  * **blank** — empty, ``-``, ``–``, ``none``, ``null``: absent, nothing remembered;
  * **N/A** — ``N/A``, ``NA``, ``N.A.``, ``not applicable`` (:func:`engine.notation.cell_word`):
    absent for the checks, remembered as ``"N/A"``;
  * **LIM** — ``LIM``, ``LIM.``, ``limitation``, and the "not tested" words ``NT``,
    ``N.T.``, ``not tested``: absent for the checks, remembered as ``"LIM"``.
    "Not tested" is a limitation, never a silent absence.
- A marked field holds no value; the record keeps the mark in ``marks``
  (field → ``"N/A"`` | ``"LIM"``). What a check makes of it is
  :mod:`engine.plausibility`'s rule: a check that needs a ``LIM`` field is
  ``incomplete`` ("limitation recorded: not tested"), a check that needs an
  ``N/A`` field is ``incomplete`` ("recorded as N/A"); neither ever passes, and
  neither is answered by a default.
- :class:`MarkedCell` is what :func:`engine.coerce_field` raises for ``LIM``
  (a caller that does not remember marks then reports the cell, never drops it);
  ``N/A`` gives ``None`` there, as it always did. A caller that remembers marks
  asks :func:`cell_mark` first.
"""

from __future__ import annotations

from typing import Final, Literal

from .errors import ReadingError
from .notation import Limitation, NotApplicable, cell_word

__all__ = ["BLANK_WORDS", "LIMITATION", "MARKS", "MARK_REASONS", "NOT_APPLICABLE", "NOT_TESTED_WORDS",
           "Mark", "MarkedCell", "cell_mark", "is_blank"]

Mark = Literal["N/A", "LIM"]
NOT_APPLICABLE: Final = "N/A"
LIMITATION: Final = "LIM"
MARKS: Final[frozenset[str]] = frozenset({NOT_APPLICABLE, LIMITATION})
#: What a check says of a field it needed and found marked.
MARK_REASONS: Final[dict[str, str]] = {
    NOT_APPLICABLE: "recorded as N/A",
    LIMITATION: "limitation recorded: not tested",
}
BLANK_WORDS: Final[frozenset[str]] = frozenset({"", "-", "–", "—", "none", "null"})
NOT_TESTED_WORDS: Final[frozenset[str]] = frozenset({"nt", "n.t.", "n.t", "not tested", "nottested"})


def is_blank(raw: object) -> bool:
    """Whether ``raw`` is an empty cell: ``None``, empty text, a dash, ``none``, ``null``."""
    return raw is None or (isinstance(raw, str) and raw.strip().lower() in BLANK_WORDS)


def cell_mark(raw: object) -> Mark | None:
    """``"N/A"`` or ``"LIM"`` when ``raw`` is one of the cell words above, else ``None``."""
    if not isinstance(raw, str) or len(raw) > 24 or raw[:1].isdigit():  # a reading: the common case
        return None
    word = cell_word(raw)
    if isinstance(word, NotApplicable):
        return NOT_APPLICABLE
    if isinstance(word, Limitation):
        return LIMITATION
    if " ".join(raw.split()).lower() in NOT_TESTED_WORDS:
        return LIMITATION
    return None


class MarkedCell(ReadingError):
    """A cell holds ``LIM`` (or "not tested"): the field has no value, and the limitation must be said."""

    code = "limitation"

    def __init__(self, field: str, text: str) -> None:
        super().__init__(f"{field}: {MARK_REASONS[LIMITATION]} ({text.strip()})", field=field, text=text)
        self.mark: Mark = LIMITATION
