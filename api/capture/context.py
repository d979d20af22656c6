"""The context in force around each captured line, so that every batch can carry its own.

A meter or logger names the board once (``board=DB2``), then each circuit once
(``circuit=3``), then sends readings: the lines format keeps that context from
line to line. The API reads each POST on its own, so a batch that starts after
``board=DB2`` was sent in an earlier batch would arrive without it. Capture
therefore works out, for every line it spools, the context before and after
it — with the same :class:`adapters.line_reader.LineReader` the API reads
with — and stores both with the line. A batch then starts with a ``#%``
directive line (``#% board=DB2 circuit=3 decimal=""``) wherever the server
would otherwise not know the context (see :meth:`api.capture.spool.BatchRows.body`).

Invariants:
- :meth:`ContextKeeper.feed` is called once per spooled line, in spool order;
  its state after line n is the adapter's state after line n of the same
  lines read in one piece.
- The state is a directive line: :meth:`ContextKeeper.restore` puts a keeper
  back exactly where that line says (after a restart, from the last spooled
  line), so a power cut between ``board=DB2`` and its circuits loses nothing.
- A regex line profile is used when this machine has it (built-in or in
  ``OHMTALLY_PROFILE_DIR``); when it does not, lines are read as our key=value
  format, and :attr:`ContextKeeper.note` says that context from regex lines
  cannot be carried.
"""

from __future__ import annotations

from adapters import AdapterError
from adapters.line_reader import LineContext, LineReader
from adapters.lines_adapter import reader_for
from adapters.profiles import get_profile

__all__ = ["EMPTY_CONTEXT", "ContextKeeper"]

EMPTY_CONTEXT = LineContext().directive()


class ContextKeeper:
    """Follows board, circuit and decimal convention through the captured lines."""

    def __init__(self, profile: str | None = None, *, profile_dir: str | None = None) -> None:
        self.note = ""
        found = None
        if profile:
            try:
                found = get_profile(profile, kind=("regex", "lines"), profile_dir=profile_dir)
            except AdapterError as exc:
                self.note = (f"profile {profile!r} is not on this machine ({exc.message}); context lines "
                             "are followed in the key=value format only")
        self._reader: LineReader = reader_for(found, None)
        self._number = 0

    @property
    def directive(self) -> str:
        """The ``#%`` line that sets the context in force now."""
        return self._reader.context.directive()

    def restore(self, directive: str) -> None:
        """Put the keeper where ``directive`` (a stored context) says."""
        for _ in self._reader.text_line(0, directive):
            pass

    def feed(self, text: str) -> tuple[str, str]:
        """Read one captured line; the context before and after it, as directive lines."""
        before = self.directive
        self._number += 1
        for _ in self._reader.line(self._number, text.encode("utf-8"), "utf-8"):
            pass
        return before, self.directive
