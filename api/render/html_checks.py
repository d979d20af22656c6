"""One check result as a person reads it: the reading against its limit, the margin, and a bar.

Invariants:
- The bar shows how much of its limit a reading takes up, one scale for every
  check: for an upper limit ``value / limit``, for a lower limit (insulation)
  ``limit / value``. 0 is an empty bar, the notch (at :data:`NOTCH` of the
  track) is the limit, past the notch is beyond it; a share past
  :data:`SCALE_END` is drawn to the end of the track with an off-scale mark.
- A bounded reading (``> 999 MΩ``, ``< 0.01 Ω``) is shown as its bound: the
  text keeps the relation, and the bar ends in an arrow pointing the way the
  true share may lie (``at most`` or ``at least``), never as a plain figure.
  Its margin is a bound too (``≥ 19 %``).
- A check without a reading or without a limit has no bar; its detail says
  what there is. Nothing here invents a figure the body does not hold.
- Numbers are shown as a meter shows them (:func:`._text.meter_pair`); a
  reading and its limit that differ never read equal.
- A previous visit's value (``inputs.previous``: a number, or an object with
  ``value``, ``relation``, ``unit``, ``date``) is shown beside the reading.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ._text import meter_number, meter_pair, percent
from .words import trade_text

__all__ = ["NOTCH", "SCALE_END", "Bar", "CheckView", "bar_for", "check_view"]

NOTCH = 0.75  # the limit's place on the track: a quarter of the track is left to show "beyond"
SCALE_END = 1 / NOTCH  # the share of the limit at the end of the track (133 %)
_TRACK = 200.0  # the bar's drawing width, in SVG user units


@dataclass(frozen=True, slots=True, kw_only=True)
class Bar:
    """The drawing of one reading against its limit, in SVG user units of a :data:`_TRACK`-wide track."""

    width: float
    notch: float
    fill: float
    share: float
    bound: str | None  # "at most" / "at least": the true share lies that way from ``fill``
    off_scale: bool

    @property
    def label(self) -> str:
        said = f"{self.bound} " if self.bound else ""
        if self.off_scale:
            return f"reading takes up {said}more than {round(SCALE_END * 100):d} % of its limit, beyond it"
        where = "beyond the limit" if self.share > 1 else "within the limit"
        return f"reading takes up {said}{round(self.share * 100):d} % of its limit, {where}"


@dataclass(frozen=True, slots=True, kw_only=True)
class CheckView:
    """What the page shows of one check result."""

    name: str
    outcome: str
    reading: str
    limit: str
    margin: str
    bar: Bar | None
    detail: str
    basis: str
    previous: str


def _number(value: Any) -> float | None:
    if isinstance(value, bool) or not isinstance(value, int | float) or value != value:
        return None
    return float(value)


def _share(value: float, limit: float, kind: str) -> float | None:
    """How much of its limit the reading takes up; None where the ratio means nothing."""
    if limit <= 0:
        return None
    if kind == "min":
        return float("inf") if value <= 0 else limit / value
    return max(value, 0.0) / limit


def _bound(relation: str, kind: str) -> str | None:
    """Which way the true share lies from a bounded reading's share."""
    if relation not in (">", "<"):
        return None
    grows = (relation == ">") != (kind == "min")  # a larger reading is a larger share for a max limit
    return "at least" if grows else "at most"


def bar_for(check: Mapping[str, Any]) -> Bar | None:
    """The bar of a check with a reading and a positive limit; None for any other check."""
    value, limit = _number(check.get("value")), _number(check.get("limit"))
    if value is None or limit is None:
        return None
    kind = "min" if check.get("limit_kind") == "min" else "max"
    share = _share(value, limit, kind)
    if share is None:
        return None
    shown = min(share, SCALE_END)
    return Bar(width=_TRACK, notch=round(_TRACK * NOTCH, 2), fill=round(_TRACK * NOTCH * shown, 2),
               share=share,
               bound=_bound(str(check.get("relation") or "="), kind), off_scale=share > SCALE_END)


def _margin(check: Mapping[str, Any], bar: Bar | None) -> str:
    margin = _number(check.get("margin"))
    if margin is None:
        return ""
    side = "" if bar is None or bar.bound is None else ("≤ " if bar.bound == "at least" else "≥ ")
    if abs(margin) >= 10 and side != ("≤ " if margin > 0 else "≥ "):  # past ±1000 %: only its sign matters
        return "> 1000 %" if margin > 0 else "< -1000 %"
    return side + percent(margin)  # a bound on the share is a bound on the margin


def _previous(inputs: Mapping[str, Any], unit: str) -> str:
    previous = inputs.get("previous")
    if previous is None:
        return ""
    if isinstance(previous, Mapping):
        rel = previous.get("relation")
        rel = "" if rel in (None, "=") else str(rel)
        when = f" ({previous['date']})" if previous.get("date") else ""
        its_unit = previous.get("unit") or unit
        return f"{rel}{meter_number(previous.get('value'))} {its_unit}".strip() + when
    return f"{meter_number(previous)} {unit}".strip()


def check_view(name: str, check: Mapping[str, Any]) -> CheckView:
    """The view of one check result, named ``name`` (:func:`.words.case_names`)."""
    unit = str(check.get("unit") or "")
    value, limit = meter_pair(check.get("value"), check.get("limit"))
    rel = check.get("relation")
    reading = "" if check.get("value") is None else f"{'' if rel in (None, '=') else rel}{value} {unit}"
    kind = {"max": "max ", "min": "min "}.get(str(check.get("limit_kind")), "")
    bar = bar_for(check)
    return CheckView(
        name=name.replace("_", " "), outcome=str(check.get("outcome")),
        reading=reading.strip(),
        limit="" if check.get("limit") is None else f"{kind}{limit} {unit}".strip(),
        margin=_margin(check, bar), bar=bar,
        detail=trade_text(str(check.get("detail") or "")), basis=str(check.get("basis") or ""),
        previous=_previous(check.get("inputs") or {}, unit))
