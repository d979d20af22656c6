"""A check passes only what the readings show: the one place that decides which values a check may use.

Every check reads a circuit through :class:`engine.context.CircuitView`, and the
view asks :func:`judge` about each value before handing it over. A value that
must not be used raises :class:`Withheld`, which :func:`engine.verify.verify_one`
turns into that check's result, so no check can pass on it, whatever its code.

Invariants:
- **Rejected is never replaced.** A field the record remembers as rejected at
  intake (``CircuitRecord.rejected``) is withheld: the check is ``incomplete``
  and names the refused text. No default takes its place.
- **A mark is said, never passed.** A field marked ``LIM`` (a recorded
  limitation: not tested) is withheld: the check is ``incomplete``, "limitation
  recorded: not tested". A field marked ``N/A`` is absent (the test does not
  apply), but where a default or an inference would stand in for it, it is
  withheld too (``incomplete``, "recorded as N/A"): a mark is never answered by
  a default.
- An inherited value (:mod:`engine.inheritance`) is judged exactly as the
  circuit's own, on the effective record; the view sets ``Problem.origin`` so
  the result says where it was written ("board DB2").
- **Impossible is never judged.** A value that cannot be physically so is
  withheld and the check is ``investigate``, with the reason. The reading itself
  is kept as the meter said it; only its use is refused:
  * resistances, impedances, times and currents read by an instrument are above
    zero (an insulation resistance may be zero: a dead short fails);
  * design values (ratings, sizes, IΔn, lengths, U0, factors) are above zero;
  * U0 within the scope the ruleset knows, and a test temperature in the range
    the ruleset finds plausible; a maximum conductor temperature at or above
    the lowest any cable has, and above the test temperature;
  * grouping and thermal-insulation factors reduce a rating (≤ 1), and an
    ambient factor is at most the largest the ruleset's table holds;
  * on TT, Zs and Ze include the installation's electrode, so neither can be
    below RA (beyond the ruleset's tolerance).
- The sign and physics rules hold for every ruleset; the ranges and tolerances
  are ruleset data (section ``plausibility``), skipped where a user's ruleset
  has none.
- :func:`judge_record` is pure and cheap; the view calls it once per circuit.
"""

from __future__ import annotations

import math
import operator
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from .compiled import derived
from .fields import FIELDS
from .findings import Basis, Finding, found
from .inference import INFERENCES
from .inheritance import site_field
from .marks import LIMITATION, MARK_REASONS
from .readings import Reading, format_number
from .records import CircuitRecord
from .results import Outcome
from .ruleset import Entry, Ruleset
from .words import word_for

__all__ = ["COMBINED", "JUDGED", "RULES", "Problem", "Rule", "Withheld", "judge", "judge_record", "usable"]

SECTION = "plausibility"

#: Readings an instrument gives above zero: no loop, conductor or electrode has 0 Ω, no
#: device trips in 0 ms, no fault current is 0 kA.
_ABOVE_ZERO = frozenset({"r1_r2_ohm", "r2_ohm", "ring_r1_ohm", "ring_rn_ohm", "ring_r2_ohm", "zs_ohm",
                         "ze_ohm", "pfc_ka", "rcd_trip_ms", "rcd_trip_5x_ms", "ra_ohm"})
#: Insulation resistance may read zero (a dead short, which fails), never below.
_NOT_NEGATIVE = frozenset({"ir_ll_mohm", "ir_le_mohm"})
_TEMPERATURES = frozenset(n for n, s in FIELDS.items() if s.unit == "degC")
_DESIGN = frozenset(n for n, s in FIELDS.items() if s.kind == "number") - _TEMPERATURES
_DERATING = frozenset({"grouping_factor", "thermal_insulation_factor"})
_TT_LOOPS = ("zs_ohm", "ze_ohm")
#: Below this a value counts as zero: no rating, size, current or reading is a nanounit, and
#: dividing by a denormal (5e-324 mA, found by the property test) overflows to infinity.
_FLOOR = 1e-9
_NO_SECTION: Mapping[str, Entry] = {}
#: A plausibility figure: (value, the published source, the ruleset entry's id).
Limit = tuple[float, str, str]


@dataclass(frozen=True, slots=True, kw_only=True)
class Problem:
    """Why a value is withheld from the checks."""

    field: str
    reason: str
    shown: str
    value: float | None = None
    basis: str | None = None
    basis_id: str | None = None
    """The ruleset entry of ``basis`` (``plausibility.<key>``)."""
    rejected: bool = False
    mark: str | None = None
    """``"N/A"`` or ``"LIM"`` when the field was withheld for its mark."""
    origin: str | None = None
    """Where an inherited value was written (``"board DB2"``, ``"installation"``); ``None``: the circuit."""


class Withheld(Exception):
    """A check read a value it must not use; :func:`engine.verify.verify_one` makes it a result."""

    def __init__(self, problem: Problem, key: tuple[str, str]) -> None:
        super().__init__(problem.reason)
        self.problem = problem
        self.key = key

    def result(self, check: str, circuit: tuple[str, str]) -> Finding:
        """The check's result: ``incomplete`` for a refused or marked value, ``investigate`` for an
        impossible one."""
        problem = self.problem
        where = "" if self.key == circuit or not self.key[1] else f"feeder {self.key[0]}/{self.key[1]}: "
        inputs: dict[str, Any] = {"field": problem.field}
        if where:
            inputs["record"] = f"{self.key[0]}/{self.key[1]}"
        elif not self.key[1]:  # a board's own facts (engine.checks.zdb_feeder): the origin names it
            inputs["board"] = self.key[0]
        if problem.origin is not None:
            inputs["inherited_from"] = problem.origin
        basis = None if problem.basis is None else Basis(id=problem.basis_id, text=problem.basis)
        if problem.mark is not None:
            inputs.update(missing=[problem.field], marked={problem.field: problem.mark})
            method = "limitation_recorded" if problem.mark == LIMITATION else "recorded_not_applicable"
            return found(check, Outcome.INCOMPLETE, method=method, inputs=inputs, basis=basis,
                         detail=lambda: _marked(problem, where))
        if problem.rejected:
            inputs.update(missing=[problem.field], rejected={problem.field: problem.shown})
            return found(check, Outcome.INCOMPLETE, method="rejected_value", inputs=inputs, basis=basis,
                         detail=lambda: _refused(problem, where))
        inputs["implausible"] = problem.shown
        return found(check, Outcome.INVESTIGATE, method="implausible_value", value=problem.value,
                     unit=FIELDS[problem.field].symbol, inputs=inputs, basis=basis,
                     detail=lambda: _impossible(problem, where))


def _at(problem: Problem) -> str:
    """Where an inherited value was written, as the sentence says it ('' for the circuit's own)."""
    if problem.origin is None:
        return ""
    written = site_field(problem.field, problem.origin)
    return f" in {problem.origin}" + ("" if written == problem.field else f" (as {word_for(written)})")


def _marked(problem: Problem, where: str) -> str:
    assert problem.mark is not None
    tail = "" if problem.mark == LIMITATION else ", and no default is used in its place"
    return (f"not judged: {where}{word_for(problem.field)} {MARK_REASONS[problem.mark]}{_at(problem)}"
            f"{tail}")


def _refused(problem: Problem, where: str) -> str:
    return (f"not judged: {where}{word_for(problem.field)} was rejected at intake{_at(problem)} "
            f"({problem.shown!r}) and no default is used in its place; record a valid value")


def _impossible(problem: Problem, where: str) -> str:
    return (f"not judged: {where}{word_for(problem.field)} {problem.shown}{_at(problem)} {problem.reason}; "
            "check the reading and the record")


def _shown(name: str, value: Any) -> str:
    symbol = FIELDS[name].symbol
    if isinstance(value, Reading):
        return value.display(symbol)
    if isinstance(value, float | int) and not isinstance(value, bool):
        return f"{format_number(float(value))}{' ' + symbol if symbol else ''}"
    return str(value)


def _number(value: Any) -> float | None:
    if isinstance(value, Reading):
        return value.value
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value)
    return None


def _effective(record: CircuitRecord, defaults: Mapping[str, Entry], name: str) -> Any:
    value = getattr(record, name)
    if value is None:
        entry = defaults.get(name)
        return None if entry is None else entry.value
    return value


Rule = Callable[[CircuitRecord, Ruleset, Mapping[str, Entry], str, Any], Problem | None]


def _sign(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
          value: Any) -> Problem | None:
    kind = type(value)  # the common cases first: judged once per field of every circuit (tests/bench)
    number = value.value if kind is Reading else value if kind is float or kind is int else _number(value)
    if number is None:
        return None  # over range (OL), a choice, a flag: nothing to judge by sign
    if _FLOOR <= number < math.inf:
        return None
    if name in _NOT_NEGATIVE:
        if number < 0.0:
            return Problem(field=name, value=number, shown=_shown(name, value),
                           reason="is below zero, which no insulation resistance can be")
        return None
    if not number >= _FLOOR or not math.isfinite(number):
        what = "reading" if name in _ABOVE_ZERO else "design value"
        return Problem(field=name, value=number, shown=_shown(name, value),
                       reason=f"is not above zero, which this {what} must be")
    return None


def _parse_limits(rules: Ruleset) -> Mapping[str, Limit]:
    section = rules.sections.get(SECTION, _NO_SECTION)
    return {key: (float(entry.value), entry.source, f"{SECTION}.{key}") for key, entry in section.items()
            if isinstance(entry.value, int | float) and not isinstance(entry.value, bool)}


def _limits(rules: Ruleset) -> Mapping[str, Limit]:
    """The ruleset's plausibility figures, parsed once per ruleset (:mod:`engine.compiled`)."""
    return derived(rules, _parse_limits)


def _limit(rules: Ruleset, key: str) -> Limit | None:
    return _limits(rules).get(key)


def _u0(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
        value: Any) -> Problem | None:
    found = _sign(record, rules, defaults, name, value)
    top = _limit(rules, "u0_max_v")
    if found is None and top is not None and float(value) > top[0]:
        found = Problem(field=name, value=float(value), shown=_shown(name, value), basis=top[1],
                        basis_id=top[2],
                        reason=f"is above the {top[0]:g} V this ruleset covers (a typo for U0?)")
    return found


def _temperatures(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
                  value: Any) -> Problem | None:
    limits = _limits(rules)
    low, high = limits.get("test_temp_min_c"), limits.get("test_temp_max_c")
    lowest_max = limits.get("insulation_temp_min_c")
    theta = float(value)
    shown = f"{format_number(theta)} °C"
    if name == "test_temp_c" and low is not None and high is not None and not low[0] <= theta <= high[0]:
        return Problem(field=name, value=theta, shown=shown, basis=low[1], basis_id=low[2],
                       reason=f"is outside the {low[0]:g}…{high[0]:g} °C a conductor is tested at")
    if name == "insulation_temp_c" and lowest_max is not None and theta < lowest_max[0]:
        return Problem(field=name, value=theta, shown=shown, basis=lowest_max[1], basis_id=lowest_max[2],
                       reason=f"is below the {lowest_max[0]:g} °C of the coolest-rated cable insulation")
    test = _effective(record, defaults, "test_temp_c")
    limit = _effective(record, defaults, "insulation_temp_c")
    if isinstance(test, int | float) and isinstance(limit, int | float) and float(test) >= float(limit):
        return Problem(field=name, value=theta, shown=shown,
                       reason=f"leaves the test temperature ({float(test):g} °C) at or above the maximum "
                              f"conductor temperature ({float(limit):g} °C)")
    return None


def _factor(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
            value: Any) -> Problem | None:
    found = _sign(record, rules, defaults, name, value)
    if found is not None:
        return found
    key = "derating_factor_max" if name in _DERATING else "ambient_factor_max"
    top = _limit(rules, key)
    if top is not None and float(value) > top[0]:
        return Problem(field=name, value=float(value), shown=_shown(name, value), basis=top[1],
                       basis_id=top[2],
                       reason=f"is above {top[0]:g}, the most such a correction factor can be")
    return None


def _is_tt(record: CircuitRecord) -> bool:
    return record.earthing == "TT" or (record.earthing is None and record.ra_ohm is not None)


def _exact(reading: Any) -> float | None:
    if isinstance(reading, Reading) and reading.exact and reading.value is not None and reading.value > 0:
        return reading.value
    return None


def _tt_loop(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
             value: Any) -> Problem | None:
    found = _sign(record, rules, defaults, name, value)
    if found is not None or not _is_tt(record):
        return found
    ohm, fraction = _limit(rules, "tt_tolerance_ohm"), _limit(rules, "tt_tolerance_fraction")
    ra = _exact(record.ra_ohm)
    if ohm is None or fraction is None or ra is None:
        return None
    loops = (name,) if name in _TT_LOOPS else _TT_LOOPS
    for loop in loops:
        measured = _exact(getattr(record, loop))
        if measured is not None and measured < ra - (ohm[0] + fraction[0] * ra):
            label = "Zs" if loop == "zs_ohm" else "Ze"
            return Problem(field=name, value=_number(value), shown=_shown(name, value), basis=ohm[1],
                           basis_id=ohm[2],
                           reason=f"cannot be: on TT the loop runs through the electrode, so {label} "
                                  f"({format_number(measured)} Ω) cannot be below RA "
                                  f"({format_number(ra)} Ω)")
    return None


_RULES: dict[str, Rule] = {
    **{name: _sign for name in _ABOVE_ZERO | _NOT_NEGATIVE | _DESIGN},
    "nominal_voltage_v": _u0,
    "test_temp_c": _temperatures,
    "insulation_temp_c": _temperatures,
    "ambient_factor": _factor,
    "grouping_factor": _factor,
    "thermal_insulation_factor": _factor,
    "zs_ohm": _tt_loop,
    "ze_ohm": _tt_loop,
    "ra_ohm": _tt_loop,
}
JUDGED: frozenset[str] = frozenset(_RULES)
#: Fields whose ruleset default is judged too: it can clash with a value the record gives.
COMBINED: frozenset[str] = frozenset({"test_temp_c", "insulation_temp_c"})
#: field → its rule, for the circuit view's inlined look-up (judge() is the same, with the rejected case)
RULES: Mapping[str, Rule] = _RULES


def judge(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry], name: str,
          value: Any) -> Problem | None:
    """Why ``value`` (the record's, or a default) must not be used for ``name``, or ``None``."""
    if value is None:
        text = record.rejected.get(name) if record.rejected else None
        if text is None:
            return None
        return Problem(field=name, shown=text, rejected=True, reason="was rejected at intake")
    rule = _RULES.get(name)
    return None if rule is None else rule(record, rules, defaults, name, value)


_ORDER = tuple(_RULES)
_VALUES = operator.attrgetter(*_ORDER)  # every judged field of a record in one call
_SIGN_ONLY = frozenset(name for name, rule in _RULES.items() if rule is _sign)


def judge_record(record: CircuitRecord, rules: Ruleset, defaults: Mapping[str, Entry]) -> dict[str, Problem]:
    """Every field of ``record`` that must not be used, with why: rejected ones and impossible ones."""
    found: dict[str, Problem] = {}
    for name, value in zip(_ORDER, _VALUES(record), strict=True):
        if value is None:
            continue
        if name in _SIGN_ONLY:  # the sign rule's common case inlined: a usable number or no number at all
            kind = type(value)
            number = (value.value if kind is Reading
                      else value if kind is float or kind is int else _number(value))
            if number is None or _FLOOR <= number < math.inf:
                continue
        problem = _RULES[name](record, rules, defaults, name, value)
        if problem is not None:
            found[name] = problem
    for name in COMBINED:  # a default can clash with the record's other value (test vs maximum temperature)
        entry = defaults.get(name)
        if getattr(record, name) is None and entry is not None and entry.value is not None:
            problem = _RULES[name](record, rules, defaults, name, entry.value)
            if problem is not None:
                found[name] = problem
    for name, text in record.rejected.items():
        if getattr(record, name) is None:
            found[name] = Problem(field=name, shown=text, rejected=True, reason="was rejected at intake")
    if record.marks:
        _judge_marks(record, defaults, found)
    return found


def _judge_marks(record: CircuitRecord, defaults: Mapping[str, Entry], found: dict[str, Problem]) -> None:
    """LIM is withheld; N/A only where a default or an inference would otherwise stand in for it."""
    for name, mark in record.marks.items():
        if getattr(record, name) is not None or name in found:
            continue
        if mark != LIMITATION:
            entry = defaults.get(name)
            stands_in = (entry is not None and entry.value is not None) or name in INFERENCES \
                or name == "neutral_mm2"
            if not stands_in:
                continue
        found[name] = Problem(field=name, shown=mark, mark=mark, reason=MARK_REASONS.get(mark, mark))


def usable(record: CircuitRecord, rules: Ruleset, name: str) -> bool:
    """Whether a board-level computation may use the record's own ``name`` (present and plausible)."""
    value = getattr(record, name)
    defaults = rules.sections.get("defaults", {})
    return value is not None and judge(record, rules, defaults, name, value) is None
