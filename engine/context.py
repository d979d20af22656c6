"""What a check sees: one circuit with the ruleset's defaults, and the whole set.

Invariants:
- :class:`CircuitView` is the only way a check reads a circuit. It answers a
  field from the record or, where the record is silent, from an inference the
  trade's notation makes unambiguous (:mod:`engine.inference`), else from the
  ruleset's ``defaults`` section, and remembers every inference and default it
  handed out: the verdict reports exactly those (``inferred``,
  ``defaults_applied``).
- It asks :mod:`engine.plausibility` about the record's values once, when
  built: a rejected or impossible value raises
  :class:`engine.plausibility.Withheld` instead of being returned, so no check
  can use it, and a rejected field is never answered by a default.
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

from .inference import INFERENCES
from .plausibility import Problem, Withheld, judge_record
from .readings import Reading
from .records import CircuitRecord
from .ruleset import Entry, Ruleset

__all__ = ["CircuitView", "Context"]

_NO_DEFAULTS: Mapping[str, Any] = {}


class CircuitView:
    """A record plus inferences and defaults, recording which were used; values judged first."""

    __slots__ = ("_defaults", "_withheld", "defaults_applied", "inferred", "record", "ruleset")

    def __init__(self, record: CircuitRecord, ruleset: Ruleset) -> None:
        self.record = record
        self.ruleset = ruleset
        self.defaults_applied: dict[str, Any] = {}
        self.inferred: dict[str, Any] = {}
        # the ruleset's defaults section, looked up once per circuit rather than per get()
        self._defaults: Mapping[str, Entry] = ruleset.sections.get("defaults", _NO_DEFAULTS)
        # Every value of the record is judged once, here, rather than at each of the ~100 reads a
        # circuit's checks make: a read is then one membership test of a (nearly always empty)
        # mapping. verify(): 1.07× (48 circuits) and 1.03× (2,000) the rate of judging lazily per
        # read (tests/bench synthetic set, best of seven interleaved runs).
        self._withheld: dict[str, Problem] = judge_record(record, ruleset, self._defaults)

    def __repr__(self) -> str:
        return f"CircuitView({self.record.board!r}, {self.record.circuit!r})"

    def raw(self, name: str) -> Any:
        """The record's own value, no inference and no default; withheld if rejected or impossible."""
        if self._withheld and name in self._withheld:
            raise Withheld(self._withheld[name], self.record.key)
        return getattr(self.record, name)

    def get(self, name: str) -> Any:
        """The record's value, else an inference, else the ruleset default (each reported), else ``None``."""
        if self._withheld and name in self._withheld:
            raise Withheld(self._withheld[name], self.record.key)  # a rejected field gets no default
        value = getattr(self.record, name)
        if value is not None:
            return value
        infer = INFERENCES.get(name)
        if infer is not None:
            found = infer(self.record, self.ruleset)
            if found is not None:
                self.inferred[name] = found
                return found
        if name == "neutral_mm2":  # engine/README.md: the neutral defaults to the line size
            line = self.raw("line_mm2")
            if line is not None:
                self.defaults_applied[name] = line
            return line
        entry = self._defaults.get(name)  # same answer as ruleset.get("defaults", name)
        default = None if entry is None else entry.value
        if default is not None:  # judged with the record where it can clash (plausibility.COMBINED)
            self.defaults_applied[name] = default
        return default

    def has(self, name: str) -> bool:
        """Whether the record gives ``name`` at all: a value, or a text it rejected (nothing judged)."""
        return getattr(self.record, name) is not None or name in self.record.rejected

    def reading(self, name: str) -> Reading | None:
        value = self.raw(name)
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

    def other_view(self, record: CircuitRecord) -> CircuitView:
        """A view of another circuit (a feeder) read for this one: built once per call."""
        key = ("context.view", record.key)
        found = self.cache.get(key)
        if found is None or found.record is not record:
            found = self.cache[key] = CircuitView(record, self.ruleset)
        view: CircuitView = found
        return view
