"""What a check sees: one circuit with the ruleset's defaults, and the whole set.

Invariants:
- :class:`CircuitView` is the only way a check reads a circuit. It answers a
  field from the record or, where the record is silent, from an inference the
  trade's notation makes unambiguous (:mod:`engine.inference`), else from the
  ruleset's ``defaults`` section, and remembers every inference and default it
  handed out: the verdict reports exactly those (``inferred``,
  ``defaults_applied``).
- Before handing a value over it asks :mod:`engine.plausibility`, once per
  field: a rejected or impossible value raises
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
from .plausibility import RULES, Withheld, judge
from .readings import Reading
from .records import CircuitRecord
from .ruleset import Entry, Ruleset

__all__ = ["CircuitView", "Context"]

_NO_DEFAULTS: Mapping[str, Any] = {}
_UNSEEN: Any = object()
#: Fields whose default can clash with what the record gives (test temperature vs maximum temperature).
_COMBINED = frozenset({"test_temp_c", "insulation_temp_c"})


class CircuitView:
    """A record plus inferences and defaults, recording which were used; values judged first."""

    __slots__ = ("_defaults", "_judged", "defaults_applied", "inferred", "record", "ruleset")

    def __init__(self, record: CircuitRecord, ruleset: Ruleset) -> None:
        self.record = record
        self.ruleset = ruleset
        self.defaults_applied: dict[str, Any] = {}
        self.inferred: dict[str, Any] = {}
        # the ruleset's defaults section, looked up once per circuit rather than per get()
        self._defaults: Mapping[str, Entry] = ruleset.sections.get("defaults", _NO_DEFAULTS)
        self._judged: dict[str, Any] = {}  # field → Problem, or None once judged usable

    def __repr__(self) -> str:
        return f"CircuitView({self.record.board!r}, {self.record.circuit!r})"

    def _checked(self, name: str, value: Any) -> Any:
        """``value`` if the checks may use it; raises :class:`Withheld` if not (judged once per field)."""
        problem = self._judged.get(name, _UNSEEN)  # a miss costs no exception: most reads are first reads
        if problem is _UNSEEN:
            problem = self._judged[name] = judge(self.record, self.ruleset, self._defaults, name, value)
        if problem is not None:
            raise Withheld(problem, self.record.key)
        return value

    def raw(self, name: str) -> Any:
        """The record's own value, no inference and no default; withheld if rejected or impossible."""
        value = getattr(self.record, name)
        if value is None:
            if self.record.rejected and name in self.record.rejected:
                return self._checked(name, None)
            return None
        return self._own(name, value)

    def _own(self, name: str, value: Any) -> Any:
        """A value the record gives, judged once per field; the common path of every read."""
        rule = RULES.get(name)  # a circuit reads ~70 values: the rule table directly, no judge() layer
        if rule is not None:
            judged = self._judged
            problem = judged.get(name, _UNSEEN)
            if problem is _UNSEEN:
                problem = judged[name] = rule(self.record, self.ruleset, self._defaults, name, value)
            if problem is not None:
                raise Withheld(problem, self.record.key)
        return value

    def get(self, name: str) -> Any:
        """The record's value, else an inference, else the ruleset default (each reported), else ``None``."""
        value = getattr(self.record, name)
        if value is not None:
            return self._own(name, value)
        if self.record.rejected and name in self.record.rejected:
            return self._checked(name, None)  # raises: a rejected field gets no default
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
        if default is not None:
            if name in _COMBINED:  # a default is plausible alone; only these can clash with the record
                default = self._checked(name, default)
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
