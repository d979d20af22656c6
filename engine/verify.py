"""``verify(records, ruleset)``: every applicable check for every circuit.

Invariants:
- One verdict per distinct ``(board, circuit)``, in first-seen order; a later
  record with the same key replaces the earlier one (callers merge first).
- Checks run in the order of :data:`engine.checks.CHECKS`.
- Nothing a record holds makes this raise. A ruleset lacking a value a check
  needs, or a bug in a check, becomes an ``incomplete`` result and an entry in
  the verdict's ``errors`` — never a pass and never a crash.
- A value the circuit view withholds (rejected at intake, or not physically
  possible: :mod:`engine.plausibility`) becomes that check's ``incomplete`` or
  ``investigate`` result here, the one place for every check; results the
  check gave before it read that value are kept.
- Nothing process-wide is read or changed: no collector tuning, no globals.
  Collector settings belong to the process that owns them (the CLI, a server
  worker); at 10,000–30,000 circuits in one call a paused collector made
  ``verify`` 1.2–1.3× faster (tests/bench, same run), at 48 circuits it made
  no difference (1.04×), so that is where the process may apply it.
"""

from __future__ import annotations

import gc
from collections.abc import Collection, Iterable, Iterator
from contextlib import contextmanager

from .checks import CHECKS
from .context import Context
from .errors import EngineError
from .plausibility import Withheld
from .records import CircuitRecord
from .results import CheckResult, Outcome, Verdict, worst
from .ruleset import Ruleset, load_ruleset

__all__ = ["collector_paused", "verify", "verify_one"]


def verify(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
           only: Collection[tuple[str, str]] | None = None) -> list[Verdict]:
    """Verdicts of every circuit, or of the circuits keyed in ``only``.

    ``only`` still sees every record (board-level checks need the whole board
    and its feeders), so each verdict is the one a full call gives; it just
    skips the circuits nobody asked about (a logger's post touches a few).
    """
    rules = load_ruleset(ruleset)
    ctx = Context.build(records, rules)
    if only is not None:
        return [verify_one(record, ctx) for key, record in ctx.records.items() if key in only]
    return [verify_one(record, ctx) for record in ctx.records.values()]


@contextmanager
def collector_paused() -> Iterator[None]:
    """Pause Python's cyclic garbage collector for the ``with`` block; restore it after.

    Not used by the engine (which touches no process-wide state): kept only so
    that the api modules importing it keep importing until they own it.
    Verdicts are trees of frozen objects with no reference cycles, so the collector
    finds nothing to free in them, yet on a large call it walks every live object
    again and again: half of verify()'s time at 30,000 circuits (tests/bench).
    Reference counting frees memory as usual while it is paused.
    """
    enabled = gc.isenabled()
    if enabled:
        gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def verify_one(record: CircuitRecord, ctx: Context) -> Verdict:
    view = ctx.view(record)
    checks: list[CheckResult] = []
    errors: list[dict[str, str]] = []
    for check_id, run in CHECKS.items():
        try:
            checks.extend(run(view, ctx))
        except Withheld as exc:
            checks.append(exc.result(check_id, record.key))
        except EngineError as exc:
            errors.append({"check": check_id, **exc.as_dict()})
            checks.append(CheckResult(check=check_id, outcome=Outcome.INCOMPLETE,
                                      detail=f"could not be evaluated: {exc.message}"))
        except Exception as exc:  # a bug must not become a pass or a 500
            errors.append({"check": check_id, "code": "check_error",
                           "message": f"{type(exc).__name__}: {exc}"})
            checks.append(CheckResult(check=check_id, outcome=Outcome.INCOMPLETE,
                                      detail="could not be evaluated (internal error, reported)"))
    return Verdict(
        board=record.board,
        circuit=record.circuit,
        outcome=worst(c.outcome for c in checks),
        checks=tuple(checks),
        defaults_applied=dict(view.defaults_applied),
        inferred=dict(view.inferred),
        errors=tuple(errors),
    )
