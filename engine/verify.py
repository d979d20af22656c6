"""``verify(records, ruleset, site=..., view=...)``: every applicable check for every circuit.

Invariants:
- One verdict per distinct ``(board, circuit)``, in first-seen order; a later
  record with the same key replaces the earlier one (callers merge first).
- With a site (:class:`engine.site.Site`), each circuit is judged on what it
  inherits from its board and the installation (:mod:`engine.inheritance`);
  the verdict says where each inherited value a check read came from
  (``inherited``). Without one, nothing is inherited.
- Checks run in the order of :data:`engine.checks.CHECKS` and yield findings
  (:mod:`engine.findings`): numbers first. The full view (``view="full"``, the
  default) renders each into a :class:`engine.results.CheckResult`; the compact
  view (``view="compact"``, :func:`verify_compact`) takes only the numbers and
  never builds a sentence. Both views run the same checks on the same findings,
  so they carry the same outcomes, values and limits.
- Nothing a record holds makes this raise. A ruleset lacking a value a check
  needs, or a bug in a check, becomes an ``incomplete`` result and an entry in
  the verdict's ``errors`` — never a pass and never a crash.
- A value the circuit view withholds (rejected at intake, marked ``LIM``, or
  not physically possible: :mod:`engine.plausibility`) becomes that check's
  ``incomplete`` or ``investigate`` result here, the one place for every check;
  results the check gave before it read that value are kept.
- An ``incomplete`` result that names as missing a field recorded as ``N/A``
  says so (``inputs.marked`` and the sentence): N/A explains an absence. A
  check that read fields a trade notation gave names the notation in its inputs
  (``inputs.notation``). Both are words of the full view; the compact view,
  which has neither inputs nor sentences, skips them.
- Nothing process-wide is read or changed: no collector tuning, no globals
  (the per-ruleset memo of :mod:`engine.compiled` keeps pure values only).
  Collector settings belong to the process that owns them (the CLI, a server
  worker); at 10,000–30,000 circuits in one call a paused collector made
  ``verify`` 1.2–1.3× faster (tests/bench, same run), at 48 circuits it made
  no difference (1.04×), so that is where the process may apply it.
"""

from __future__ import annotations

from collections.abc import Collection, Iterable
from typing import Literal, overload

from .checks import CHECKS
from .compact import CompactVerdict
from .context import CircuitView, Context
from .errors import EngineError
from .findings import Finding, compact_row, found, inputs_of, render, to_result
from .marks import MARK_REASONS
from .plausibility import Withheld
from .records import CircuitRecord
from .results import OUTCOME_TEXT, Outcome, Verdict
from .ruleset import Ruleset, load_ruleset
from .site import Site
from .visits import PreparedVisit, PreviousVisit, prepare
from .words import word_for

__all__ = ["CompactVerdict", "View", "compact_one", "verify", "verify_compact", "verify_one"]

View = Literal["full", "compact"]
_SEVERITY = {Outcome.PASS: 0, Outcome.INCOMPLETE: 1, Outcome.INVESTIGATE: 2, Outcome.FAIL: 3}
_BY_SEVERITY = (Outcome.PASS, Outcome.INCOMPLETE, Outcome.INVESTIGATE, Outcome.FAIL)


@overload
def verify(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
           only: Collection[tuple[str, str]] | None = None, site: Site | None = None,
           view: Literal["full"] = "full", previous: PreviousVisit | None = None) -> list[Verdict]: ...


@overload
def verify(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
           only: Collection[tuple[str, str]] | None = None, site: Site | None = None,
           view: Literal["compact"], previous: PreviousVisit | None = None) -> list[CompactVerdict]: ...


def verify(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
           only: Collection[tuple[str, str]] | None = None, site: Site | None = None,
           view: View = "full",
           previous: PreviousVisit | None = None) -> list[Verdict] | list[CompactVerdict]:
    """Verdicts of every circuit, or of the circuits keyed in ``only``, in the view asked for.

    ``only`` still sees every record (board-level checks need the whole board
    and its feeders), so each verdict is the one a full call gives; it just
    skips the circuits nobody asked about (a logger's post touches a few).
    ``site`` gives the installation and board records the circuits inherit from.
    ``view="compact"`` is :func:`verify_compact`. ``previous`` is the installation's
    previous visit (:class:`engine.visits.PreviousVisit`): each circuit that matches one of
    its circuits gets the ``previous_visit`` check; without it that check is left out.
    """
    if view == "compact":
        return verify_compact(records, ruleset, only=only, site=site, previous=previous)
    if view != "full":
        raise ValueError(f"view must be 'full' or 'compact', not {view!r}")
    ctx = Context.build(records, load_ruleset(ruleset), site, previous=_prepared(previous))
    return [verify_one(record, ctx) for record in _wanted(ctx, only)]


def verify_compact(records: Iterable[CircuitRecord], ruleset: Ruleset | str | None = None, *,
                   only: Collection[tuple[str, str]] | None = None,
                   site: Site | None = None, previous: PreviousVisit | None = None) -> list[CompactVerdict]:
    """The compact view: per circuit its outcome and ``[check, outcome, value, relation, limit, unit,
    basis_id]`` per result, computed without building a sentence."""
    ctx = Context.build(records, load_ruleset(ruleset), site, tracking=False, previous=_prepared(previous))
    return [compact_one(record, ctx) for record in _wanted(ctx, only)]


def _prepared(previous: PreviousVisit | None) -> PreparedVisit | None:
    return None if previous is None else prepare(previous)


def _wanted(ctx: Context, only: Collection[tuple[str, str]] | None) -> Iterable[CircuitRecord]:
    if only is None:
        return ctx.records.values()
    return [record for key, record in ctx.records.items() if key in only]


def _worst(findings: list[Finding]) -> Outcome:
    if not findings:
        return Outcome.INCOMPLETE  # nothing was shown to pass
    return _BY_SEVERITY[max(_SEVERITY[f.outcome] for f in findings)]


def verify_one(record: CircuitRecord, ctx: Context) -> Verdict:
    """The full verdict of one circuit of ``ctx``."""
    view = ctx.view(record)
    findings, errors = _findings(view, ctx, full=True)
    if record.marks:
        _say_marks(findings, view)
    return Verdict(
        board=record.board,
        circuit=record.circuit,
        outcome=_worst(findings),
        checks=tuple(to_result(f) for f in findings),
        description=record.description,
        defaults_applied=dict(view.defaults_applied),
        inferred=dict(view.inferred),
        inherited=dict(view.inherited),
        errors=tuple(errors),
    )


def compact_one(record: CircuitRecord, ctx: Context) -> CompactVerdict:
    """The compact verdict of one circuit of ``ctx``."""
    findings, _errors = _findings(ctx.view(record), ctx, full=False)
    return {"board": record.board, "circuit": record.circuit, "outcome": OUTCOME_TEXT[_worst(findings)],
            "checks": [compact_row(f) for f in findings]}


def _findings(view: CircuitView, ctx: Context, *, full: bool) -> tuple[list[Finding], list[dict[str, str]]]:
    findings: list[Finding] = []
    errors: list[dict[str, str]] = []
    record = view.record
    noted = full and bool(record.notation)
    for check_id, run in CHECKS.items():
        start = len(findings)
        try:
            findings.extend(run(view, ctx))
        except Withheld as exc:
            findings.append(exc.result(check_id, record.key))
        except EngineError as exc:
            errors.append({"check": check_id, **exc.as_dict()})
            findings.append(found(check_id, Outcome.INCOMPLETE,
                                  detail=f"could not be evaluated: {exc.message}"))
        except Exception as exc:  # a bug must not become a pass or a 500
            errors.append({"check": check_id, "code": "check_error",
                           "message": f"{type(exc).__name__}: {exc}"})
            findings.append(found(check_id, Outcome.INCOMPLETE,
                                  detail="could not be evaluated (internal error, reported)"))
        if noted and view.notation_read:
            _name_notation(findings, start, view)
    return findings, errors


def _name_notation(findings: list[Finding], start: int, view: CircuitView) -> None:
    """The notation whose fields this check read goes into its results' inputs."""
    given = {name: view.record.notation[name] for name in sorted(view.notation_read)}
    view.notation_read.clear()
    for at in range(start, len(findings)):
        findings[at] = findings[at]._replace(inputs={**inputs_of(findings[at]), "notation": given})


def _say_marks(findings: list[Finding], view: CircuitView) -> None:
    """An incomplete result missing a field recorded as N/A or LIM says so (a mark explains an absence)."""
    marks = view.record.marks
    for at, result in enumerate(findings):
        if result.outcome is not Outcome.INCOMPLETE:
            continue
        inputs = inputs_of(result)
        missing = inputs.get("missing")
        if not missing or "marked" in inputs:
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
        detail = f"{render(result.detail)} ({'; '.join(said)})"
        findings[at] = result._replace(inputs={**inputs, "marked": marked}, detail=detail)
