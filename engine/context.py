"""What a check sees: one circuit with the ruleset's defaults, and the whole set.

Invariants:
- :class:`CircuitView` answers a field from the record or, where the record is
  silent, from the ruleset's ``defaults`` section, and remembers every default
  it handed out: the verdict reports exactly those (``defaults_applied``).
- :class:`Context` is built once per :func:`engine.verify` call and holds every
  record of the call, indexed by key and by board, plus a cache that board-level
  computations (feeder chains, a board's Ze consensus) fill on first use. It is
  per call: nothing is shared between calls, so ``verify`` stays pure.
- ``records``, ``by_board`` and ``cache`` are typed as mappings so that
  :func:`engine.stream.verify_stream` can layer one board's records over the
  few it keeps from earlier boards (``collections.ChainMap``) without copying.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Iterable, Mapping, MutableMapping
from dataclasses import dataclass, field
from typing import Any

from .readings import Reading
from .records import CircuitRecord
from .ruleset import Ruleset

__all__ = ["CircuitView", "Context"]

_NO_DEFAULTS: Mapping[str, Any] = {}


class CircuitView:
    """A record plus defaults, recording which defaults were used."""

    __slots__ = ("_defaults", "defaults_applied", "record", "ruleset")

    def __init__(self, record: CircuitRecord, ruleset: Ruleset) -> None:
        self.record = record
        self.ruleset = ruleset
        self.defaults_applied: dict[str, Any] = {}
        # the ruleset's defaults section, looked up once per circuit rather than per get()
        self._defaults: Mapping[str, Any] = ruleset.sections.get("defaults", _NO_DEFAULTS)

    def __repr__(self) -> str:
        return f"CircuitView({self.record.board!r}, {self.record.circuit!r})"

    def raw(self, name: str) -> Any:
        """The record's own value, no default."""
        return getattr(self.record, name)

    def get(self, name: str) -> Any:
        """The record's value, else the ruleset default (reported), else ``None``."""
        value = getattr(self.record, name)
        if value is not None:
            return value
        if name == "neutral_mm2":  # engine/README.md: the neutral defaults to the line size
            line = self.record.line_mm2
            if line is not None:
                self.defaults_applied[name] = line
            return line
        entry = self._defaults.get(name)  # same answer as ruleset.get("defaults", name)
        default = None if entry is None else entry.value
        if default is not None:
            self.defaults_applied[name] = default
        return default

    def reading(self, name: str) -> Reading | None:
        value = getattr(self.record, name)
        assert value is None or isinstance(value, Reading), name
        return value


@dataclass(slots=True)
class Context:
    ruleset: Ruleset
    records: Mapping[tuple[str, str], CircuitRecord]
    by_board: Mapping[str, list[CircuitRecord]]
    cache: MutableMapping[Any, Any] = field(default_factory=dict)

    @classmethod
    def build(cls, records: Iterable[CircuitRecord], ruleset: Ruleset) -> Context:
        index: dict[tuple[str, str], CircuitRecord] = {}
        boards: dict[str, list[CircuitRecord]] = defaultdict(list)
        for record in records:
            if record.key in index:
                boards[record.board].remove(index[record.key])
            index[record.key] = record
            boards[record.board].append(record)
        return cls(ruleset=ruleset, records=index, by_board=dict(boards))

    def view(self, record: CircuitRecord) -> CircuitView:
        return CircuitView(record, self.ruleset)
