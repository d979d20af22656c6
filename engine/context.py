"""What a check sees: one circuit with what it inherits and the ruleset's defaults, and the whole set.

Invariants:
- :class:`CircuitView` is the only way a check reads a circuit. ``view.read``
  answers a record field as an attribute (``view.read.zs_ohm``): it is the
  record itself when nothing needs guarding, else a guard that withholds and
  notes each read exactly as :meth:`CircuitView.raw` does. :meth:`CircuitView.get` answers a
  field from the record — the *effective* record, with what the circuit
  inherits from its board and the installation written in
  (:mod:`engine.inheritance`) — or, where that is silent, from an inference the
  trade's notation makes unambiguous (:mod:`engine.inference`), else from the
  ruleset's ``defaults`` section, and remembers every inherited value,
  inference and default it handed out: the verdict reports exactly those
  (``inherited``, ``inferred``, ``defaults_applied``). What a kept notation
  inferred (the standard of a bare ``B32``) is reported as inferred when read.
- It asks :mod:`engine.plausibility` about the record's values once, when
  built: a rejected or impossible value raises
  :class:`engine.plausibility.Withheld` instead of being returned, so no check
  can use it, and a rejected field is never answered by a default.
- Inherited values are judged exactly as the circuit's own (the same
  plausibility rules, on the effective record); a refused or marked value
  names where it was written (``Problem.origin``: ``"board DB2"``).
- :class:`Context` is built once per :func:`engine.verify` call and holds every
  (effective) record of the call, indexed by key and by board, the site, where
  each circuit's inherited values came from, plus a cache that board-level
  computations (feeder chains, a board's Ze consensus) fill on first use. It is
  per call: nothing is shared between calls, so ``verify`` stays pure.
- A view built with ``tracking=False`` (the compact view's) notes nothing: the
  verdict's ``inherited`` map and the notation named in the inputs are words of
  the full view. It withholds exactly what a tracking view withholds, so both
  views reach the same outcomes.
- ``records``, ``by_board``, ``sources`` and ``cache`` are typed as mappings so that
  :func:`engine.stream.verify_stream` can layer one board's records over the
  few it keeps from earlier boards (``collections.ChainMap``) without copying.
"""

from __future__ import annotations

import dataclasses
from collections import defaultdict
from collections.abc import Iterable, Mapping, MutableMapping
from dataclasses import dataclass, field
from typing import Any

from .compiled import group_memo
from .inference import INFERENCES
from .inheritance import board_plan, inherit
from .marks import LIMITATION
from .plausibility import Problem, Withheld, judge_record
from .readings import Reading
from .record_notation import notation_values
from .records import CircuitRecord
from .ruleset import Entry, Ruleset
from .site import Site
from .visits import PreparedVisit

__all__ = ["CircuitView", "Context"]

_NO_DEFAULTS: Mapping[str, Any] = {}
_NO_SOURCES: Mapping[str, str] = {}


class _Guarded:
    """``view.read`` where a read must be withheld or noted: every attribute is :meth:`CircuitView.raw`."""

    __slots__ = ("_view",)

    def __init__(self, view: CircuitView) -> None:
        self._view = view

    def __getattr__(self, name: str) -> Any:
        return self._view.raw(name)


class CircuitView:
    """A record plus inferences and defaults, recording which were used; values judged first."""

    __slots__ = ("_defaults", "_fallen", "_notation_of", "_noted", "_sources", "_tracked", "_withheld",
                 "defaults_applied", "inferred", "inherited", "notation_read", "read", "record", "ruleset")

    read: CircuitRecord
    """The record's fields as attributes, each read as :meth:`raw` reads it (withheld, noted).

    The record itself when nothing is withheld and no read needs noting (the common
    case: a read is then one attribute access, not a method call; ~100 reads a
    circuit), else a guard with the record's attribute names.
    """

    def __init__(self, record: CircuitRecord, ruleset: Ruleset,
                 sources: Mapping[str, str] = _NO_SOURCES, *, tracking: bool = True) -> None:
        self.record = record
        self.ruleset = ruleset
        self.defaults_applied: dict[str, Any] = {}
        self.inferred: dict[str, Any] = {}
        self.inherited: dict[str, str] = {}
        self.notation_read: set[str] = set()  # notation inputs whose fields were read (verify_one resets)
        self._sources = sources
        # fields whose read is noted (inherited, or given by a kept notation): usually none
        self._tracked: frozenset[str] | Mapping[str, str] = sources
        self._notation_of: dict[str, str] = {}
        self._noted: dict[str, Any] = {}
        self._fallen: dict[str, Any] = {}  # name → what get() answered for a field the record leaves out
        if not tracking:
            self._tracked = frozenset()
        elif record.notation:
            self._note_notation(record)
        # the ruleset's defaults section, looked up once per circuit rather than per get()
        self._defaults: Mapping[str, Entry] = ruleset.sections.get("defaults", _NO_DEFAULTS)
        # Every value of the record is judged once, here, rather than at each of the ~100 reads a
        # circuit's checks make: a read is then one membership test of a (nearly always empty)
        # mapping. verify(): 1.07× (48 circuits) and 1.03× (2,000) the rate of judging lazily per
        # read (tests/bench synthetic set, best of seven interleaved runs).
        self._withheld: dict[str, Problem] = judge_record(record, ruleset, self._defaults)
        if sources and self._withheld:
            for name, problem in self._withheld.items():
                if name in sources:
                    self._withheld[name] = dataclasses.replace(problem, origin=sources[name])
        self.read = _Guarded(self) if self._tracked or self._withheld else record  # type: ignore[assignment]

    def _note_notation(self, record: CircuitRecord) -> None:
        """Which split fields a kept notation gave (to name it in the checks' inputs) and inferred."""
        values, inferred = notation_values(record.notation)
        for name in record.notation:
            for split, value in notation_values({name: record.notation[name]})[0].items():
                if getattr(record, split) == value:
                    self._notation_of[split] = name
        self._noted = {f: values[f] for f in inferred if f in self._notation_of}
        self._tracked = frozenset({*self._sources, *self._notation_of})

    def _note(self, name: str) -> None:
        source = self._sources.get(name)
        if source is not None:
            self.inherited[name] = source
        notation = self._notation_of.get(name)
        if notation is not None:
            self.notation_read.add(notation)
            if name in self._noted:
                self.inferred[name] = self._noted[name]

    def __repr__(self) -> str:
        return f"CircuitView({self.record.board!r}, {self.record.circuit!r})"

    def raw(self, name: str) -> Any:
        """The record's own value, no inference and no default; withheld if rejected or impossible."""
        if self._tracked and name in self._tracked:
            self._note(name)
        if self._withheld and name in self._withheld:
            raise Withheld(self._withheld[name], self.record.key)
        return getattr(self.record, name)

    def source(self, name: str) -> str | None:
        """Where the effective ``name`` came from: ``"board DB2"``, ``"installation"``, ``None`` (its own)."""
        return self._sources.get(name)

    def get(self, name: str) -> Any:
        """The record's value, else an inference, else the ruleset default (each reported), else ``None``."""
        if self._tracked and name in self._tracked:
            self._note(name)
        if self._withheld and name in self._withheld:
            raise Withheld(self._withheld[name], self.record.key)  # a rejected field gets no default
        value = getattr(self.record, name)
        if value is not None:
            return value
        try:  # asked again (a circuit's checks ask for U0 or the temperatures many times): reported already
            return self._fallen[name]
        except KeyError:
            found = self._fallen[name] = self._fall_back(name)
            return found

    def _fall_back(self, name: str) -> Any:
        """An inference, else the default, for a field the record leaves out (each reported)."""
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
        """Whether the record gives ``name`` at all: a value, a text it rejected, or ``LIM`` (nothing judged).

        ``N/A`` is not given: the test does not apply.
        """
        record = self.record
        return (getattr(record, name) is not None or name in record.rejected
                or (bool(record.marks) and record.marks.get(name) == LIMITATION))

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
    site: Site | None = None
    sources: Mapping[tuple[str, str], Mapping[str, str]] = field(default_factory=dict)
    """Circuit key → where each of its inherited fields came from (only circuits that inherit)."""
    tracking: bool = True
    """Whether views note what they hand out (the full view's ``inherited``, ``notation``); see above."""
    memo: dict[Any, Any] = field(default_factory=dict)
    """The ruleset's device and cable group memo (:func:`engine.compiled.group_memo`)."""
    previous: PreparedVisit | None = None
    """The previous visit of the installation, made ready once per call (``previous_visit``)."""

    def __post_init__(self) -> None:
        if not self.memo:
            self.memo = group_memo(self.ruleset)

    @classmethod
    def build(cls, records: Iterable[CircuitRecord], ruleset: Ruleset, site: Site | None = None, *,
              tracking: bool = True, previous: PreparedVisit | None = None) -> Context:
        index: dict[tuple[str, str], CircuitRecord] = {}
        boards: dict[str, list[CircuitRecord]] = defaultdict(list)
        for record in records:
            if record.key in index:
                boards[record.board].remove(index[record.key])
            index[record.key] = record
            boards[record.board].append(record)
        sources: dict[tuple[str, str], Mapping[str, str]] = {}
        # Inherited values are written onto one copy of each record here, once per call, so every read
        # stays one attribute access: verify() with a site at 0.89× (median of six interleaved runs) the
        # rate of the same circuits given with those values, 2,000 synthetic circuits (tests/bench).
        if site is not None and (site.installation is not None or site.boards):
            for board, own in boards.items():
                plan = board_plan(board, own, site)
                if not plan:
                    continue
                for at, record in enumerate(own):
                    effective, where = inherit(record, plan)
                    if where:
                        own[at] = index[record.key] = effective
                        sources[record.key] = where
        return cls(ruleset=ruleset, records=index, by_board=dict(boards), site=site, sources=sources,
                   tracking=tracking, previous=previous)

    def view(self, record: CircuitRecord) -> CircuitView:
        return CircuitView(record, self.ruleset, self.sources.get(record.key, _NO_SOURCES),
                           tracking=self.tracking)

    def other_view(self, record: CircuitRecord) -> CircuitView:
        """A view of another circuit (a feeder) read for this one: built once per call."""
        key = ("context.view", record.key)
        found = self.cache.get(key)
        if found is None or found.record is not record:
            found = self.cache[key] = self.view(record)
        view: CircuitView = found
        return view
