"""Whether a circuit has an RCD: the one answer rcd_time and additional_protection share.

Invariants:
- An RCD is shown by its rating (``rcd_residual_ma``), by an RCBO (recorded or
  inferred ``device_kind``), or by any RCD test result on the record (a trip
  time, the ½ IΔn test): a recorded trip time means an RCD is there.
- The answer names the field that showed it, for the result's ``inputs``.
"""

from __future__ import annotations

from ..context import CircuitView

__all__ = ["rcd_evidence"]

_TESTS = ("rcd_trip_ms", "rcd_trip_5x_ms", "rcd_half_no_trip")


def rcd_evidence(view: CircuitView) -> str | None:
    """The field that shows the circuit has an RCD, or ``None``."""
    if view.raw("rcd_residual_ma") is not None:
        return "rcd_residual_ma"
    if view.get("device_kind") == "rcbo":
        return "device_kind"
    return next((name for name in _TESTS if view.raw(name) is not None), None)
