"""The maximum Zs a circuit is judged against: device tables at the regulation's time, overrides tightening.

Invariants:
- The device is the one the circuit view describes (``device_kind`` as recorded
  or inferred); its maximum comes from the ruleset's tables at the time
  :func:`engine.protection.disconnection_time` gives (itself tightened only).
- ``device_max_zs_ohm`` (the designer's or maker's figure) may tighten the
  table, never loosen it: above the table's value for a known device the table's
  value is used and ``refused`` says so. Where no table covers the device (an
  unknown standard, an untabulated rating) the designer's figure stands, and
  the basis says it is the designer's. Where the device is known but its time
  is not, the figure stands only if no tabulated time could give less.
- Lookups are pure functions of the ruleset and their arguments, kept in the
  ruleset's group memo (``ctx.memo``, :mod:`engine.compiled`: a job repeats a
  few devices; recomputing them per circuit was a sixth of verify()'s time,
  tests/bench). Numbers enter the keys with their type, so 32 and 32.0 never
  share an entry.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from ..compiled import remember
from ..context import CircuitView, Context
from ..findings import Basis
from ..protection import Device, MaxZs, Missing, disconnection_time, max_zs_for, resolve_device
from ..protection.disconnection import Disconnection

__all__ = ["ZsLimit", "circuit_device", "zs_limit"]

_DEVICE_KEY = "zs_limit.device"
_MAX_ZS_KEY = "zs_limit.max_zs"
_LIMIT_KEY = "zs_limit.limit"


@dataclass(frozen=True, slots=True, kw_only=True)
class ZsLimit:
    """The maximum Zs in force, the time it is for, and any override it refused.

    ``said`` (the notes), ``figures`` (the inputs) and ``basis`` are worked out when
    it is made (:func:`_limit`); a limit of a device group is made once per ruleset.
    """

    max_zs: MaxZs
    seconds: float | None
    timing: Disconnection | None = None
    refused: dict[str, Any] | None = None  # field → recorded figure the regulation's replaced
    said: str = ""
    figures: Mapping[str, Any] = field(default_factory=dict)
    basis: Basis | None = None

    def notes(self) -> str:
        """Sentences saying which recorded figures were not used, and why ('' when none)."""
        return self.said

    def inputs(self) -> dict[str, Any]:
        return dict(self.figures)


def _notes(max_zs: MaxZs, timing: Disconnection | None, refused: dict[str, Any] | None) -> str:
    out = []
    if timing is not None and timing.refused_override is not None:
        out.append(f"the record's maximum disconnection time {timing.refused_override:g} s is longer "
                   f"than the {timing.seconds:g} s the regulation requires ({timing.reason}): "
                   "the regulation's time is used")
    if refused and "device_max_zs_ohm" in refused:
        out.append(f"the record's given maximum Zs {refused['device_max_zs_ohm']:g} Ω is above the "
                   f"{max_zs.ohm:g} Ω the table gives {max_zs.device}: the table's value "
                   "is used")
    return "; ".join(out)


def _figures(max_zs: MaxZs, seconds: float | None, timing: Disconnection | None,
             refused: dict[str, Any] | None) -> dict[str, Any]:
    out: dict[str, Any] = {"max_zs": max_zs.ohm, "disconnection_s": seconds,
                           "device": max_zs.device, "max_zs_basis": max_zs.basis}
    if max_zs.table_s is not None:
        out["table_s"] = max_zs.table_s
    if max_zs.formula:
        out["max_zs_formula"] = max_zs.formula
    if timing is not None and timing.refused_override is not None:
        out["max_disconnection_s_refused"] = timing.refused_override
    if refused:
        out.update({f"{name}_refused": value for name, value in refused.items()})
    if max_zs.doubtful:
        out["max_zs_doubtful"] = max_zs.doubtful
    return out


def _limit(max_zs: MaxZs, seconds: float | None, timing: Disconnection | None = None,
           refused: dict[str, Any] | None = None) -> ZsLimit:
    return ZsLimit(max_zs=max_zs, seconds=seconds, timing=timing, refused=refused,
                   said=_notes(max_zs, timing, refused),
                   figures=MappingProxyType(_figures(max_zs, seconds, timing, refused)),
                   basis=Basis(id=max_zs.basis_id, text=max_zs.basis))


def _typed(value: object) -> tuple[type, object]:
    return (type(value), value)


def circuit_device(view: CircuitView, ctx: Context) -> Device | Missing:
    """The protective device the record describes (kept per distinct description and ruleset)."""
    read = view.read
    raw = (view.get("device_kind"), read.device_standard, read.device_curve, read.device_rating_a)
    key = (_DEVICE_KEY, *map(_typed, raw))
    try:
        cached: Device | Missing = ctx.memo[key]
    except KeyError:
        cached = remember(ctx.memo, key, resolve_device(ctx.ruleset, kind=raw[0], standard=raw[1],
                                                        curve=raw[2], rating_a=raw[3]))
    except TypeError:  # an unhashable value: compute without the memo
        return resolve_device(ctx.ruleset, kind=raw[0], standard=raw[1], curve=raw[2], rating_a=raw[3])
    return cached


def table_max_zs(ctx: Context, device: Device, u0: float, seconds: float) -> MaxZs | Missing:
    key = (_MAX_ZS_KEY, device, _typed(device.rating_a), _typed(u0), _typed(seconds))
    try:
        cached: MaxZs | Missing = ctx.memo[key]
    except KeyError:
        cached = remember(ctx.memo, key, max_zs_for(ctx.ruleset, device, u0, seconds))
    return cached


def _designer(figure: float, why: str) -> MaxZs:
    return MaxZs(ohm=figure, basis=f"record: the given maximum Zs (the designer's or maker's figure; {why})",
                 device="as recorded", basis_id="record:device_max_zs_ohm")


def _with_override(figure: float, device: Device | Missing, timing: Disconnection | Missing,
                   u0: float | None, ctx: Context) -> ZsLimit | Missing:
    if isinstance(device, Missing) or u0 is None:
        return _limit(_designer(figure, "no table covers the device"), None)
    if isinstance(timing, Missing):
        times = [float(t) for t in ctx.ruleset.get("breakers", "ia_multiple", {}) or {}] or [0.4]
        strictest = table_max_zs(ctx, device, u0, min(times))
        if isinstance(strictest, MaxZs) and figure > strictest.ohm:
            return Missing(fields=timing.fields,
                           reason=f"{timing.reason}: needed to tell whether the given maximum Zs "
                                  f"{figure:g} Ω is within the table for {device.label()}")
        return _limit(_designer(figure, "no longer than any tabulated time allows"), None)
    table = table_max_zs(ctx, device, u0, timing.seconds)
    if isinstance(table, Missing):
        return _limit(_designer(figure, f"no table value: {table.reason}"), timing.seconds, timing)
    if figure <= table.ohm:
        return _limit(_designer(figure, f"within the table's {table.ohm:g} Ω"), timing.seconds, timing)
    return _limit(table, timing.seconds, timing, {"device_max_zs_ohm": figure})


def zs_limit(view: CircuitView, ctx: Context) -> ZsLimit | Missing:
    """The maximum Zs in force for the circuit, or what is missing to know it."""
    figure = view.read.device_max_zs_ohm  # judged above zero by the view
    device = circuit_device(view, ctx)
    timing = disconnection_time(view, ctx.ruleset)
    u0_raw = view.get("nominal_voltage_v")
    u0 = None if u0_raw is None else float(u0_raw)
    if figure is not None:
        return _with_override(float(figure), device, timing, u0, ctx)
    if isinstance(device, Missing) or isinstance(timing, Missing):
        fields = [f for m in (device, timing) if isinstance(m, Missing) for f in m.fields]
        reasons = "; ".join(m.reason for m in (device, timing) if isinstance(m, Missing))
        if "device_max_zs_ohm" not in fields:
            fields.append("device_max_zs_ohm")
        return Missing(fields=tuple(dict.fromkeys(fields)), reason=reasons)
    if u0 is None:
        return Missing(fields=("nominal_voltage_v",), reason="U0 sets the maximum Zs")
    found = table_max_zs(ctx, device, u0, timing.seconds)
    if isinstance(found, Missing):
        return found
    # a device group's limit, made once per ruleset: both parts are themselves kept in the memo, which
    # holds them beside this entry, so their ids are not reused while it stands
    key = (_LIMIT_KEY, id(found), id(timing))
    limit: ZsLimit | None = ctx.memo.get(key)
    if limit is None or limit.max_zs is not found or limit.timing is not timing:
        limit = remember(ctx.memo, key, _limit(found, timing.seconds, timing))
    return limit
