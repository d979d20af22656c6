"""``verify(records, ruleset, site=...)``: every applicable check for every circuit.

Invariants:
- One verdict per distinct ``(board, circuit)``, in first-seen order; a later
  record with the same key replaces the earlier one (callers merge first).
- With a site (:class:`engine.site.Site`), each circuit is judged on what it
  inherits from its board and the installation (:mod:`engine.inheritance`);
  the verdict says where each inherited value a check read came from
  (``inherited``). Without one, nothing is inherited.
- Checks run in the order of :data:`engine.checks.CHECKS`.
- Nothing a record holds makes this raise. A ruleset lacking a value a check
  needs, or a bug in a check, becomes an ``incomplete`` result and an entry in
  the verdict's ``errors`` — never a pass and never a crash.
- A value the circuit view withholds (rejected at intake, marked ``LIM``, or
  not physically possible: :mod:`engine.plausibility`) becomes that check's
  ``incomplete`` or ``investigate`` result here, the one place for every check;
  results the check gave before it read that value are kept.
- An ``incomplete`` result that names as missing a field recorded as ``N/A``
  says so (``inputs.marked`` and the sentence): N/A explains an absence.
- A check that read fields a trade notation gave (``"device": "B32"``) names
  the notation in its inputs (``inputs.notation``).
- Nothing process-wide is read or changed: no collector tuning, no globals.
  Collector settings belong to the process that owns them (the CLI, a server
  worker); at 10,000–30,000 circuits in one call a paused collector made
  ``verify`` 1.2–1.3× faster (tests/bench, same run), at 48 circuits it made
  no difference (1.04×), so that is where the process may apply it.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Collection, Iterable

from .checks import CHECKS
from .context import CircuitView, Context
from .errors import EngineError
from .marks import MARK_REASONS
from .plausibility import Withheld
from .records import CircuitRecord
from .results import CheckResult, Outcome, Verdict, worst
from .ruleset import Ruleset, load_ruleset
from .site import Site
from .words import word_for

__all__ = ["verify", "verify_one"]


def verify(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
           only: Collection[tuple[str, str]] | None = None, site: Site | None = None) -> list[Verdict]:
    """Verdicts of every circuit, or of the circuits keyed in ``only``.

    ``only`` still sees every record (board-level checks need the whole board
    and its feeders), so each verdict is the one a full call gives; it just
    skips the circuits nobody asked about (a logger's post touches a few).
    ``site`` gives the installation and board records the circuits inherit from.
    """
    rules = load_ruleset(ruleset)
    ctx = Context.build(records, rules, site)
    if only is not None:
        return [verify_one(record, ctx) for key, record in ctx.records.items() if key in only]
    return [verify_one(record, ctx) for record in ctx.records.values()]


def verify_one(record: CircuitRecord, ctx: Context) -> Verdict:
    view = ctx.view(record)
    checks: list[CheckResult] = []
    errors: list[dict[str, str]] = []
    noted = bool(record.notation)
    for check_id, run in CHECKS.items():
        start = len(checks)
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
        if noted and view.notation_read:
            _name_notation(checks, start, view)
    if record.marks:
        _say_marks(checks, view)
    return Verdict(
        board=record.board,
        circuit=record.circuit,
        outcome=worst(c.outcome for c in checks),
        checks=tuple(checks),
        description=record.description,
        defaults_applied=dict(view.defaults_applied),
        inferred=dict(view.inferred),
        inherited=dict(view.inherited),
        errors=tuple(errors),
    )


def _name_notation(checks: list[CheckResult], start: int, view: CircuitView) -> None:
    """The notation whose fields this check read goes into its results' inputs."""
    given = {name: view.record.notation[name] for name in sorted(view.notation_read)}
    view.notation_read.clear()
    for at in range(start, len(checks)):
        checks[at] = dataclasses.replace(checks[at], inputs={**checks[at].inputs, "notation": given})


def _say_marks(checks: list[CheckResult], view: CircuitView) -> None:
    """An incomplete result missing a field recorded as N/A or LIM says so (a mark explains an absence)."""
    marks = view.record.marks
    for at, result in enumerate(checks):
        missing = result.inputs.get("missing") if result.outcome is Outcome.INCOMPLETE else None
        if not missing or "marked" in result.inputs:
            continue
        marked = {name: marks[name] for name in missing if isinstance(name, str) and name in marks}
        if not marked:
            continue
        said = []
        for name, mark in marked.items():
            source = view.source(name)
            said.append(f"{word_for(name)} {MARK_REASONS.get(mark, mark)}" + (f" in {source}" * bool(source)))
            if source:
                view.inherited[name] = source
        checks[at] = dataclasses.replace(result, inputs={**result.inputs, "marked": marked},
                                         detail=f"{result.detail} ({'; '.join(said)})")
