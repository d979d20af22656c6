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



def rcd_evidence(view: CircuitView) -> str | None:
    """The field that shows the circuit has an RCD, or ``None``."""
    read = view.read
    if read.rcd_residual_ma is not None:
        return "rcd_residual_ma"
    if view.get("device_kind") == "rcbo":
        return "device_kind"
    if read.rcd_trip_ms is not None:
        return "rcd_trip_ms"
    if read.rcd_trip_5x_ms is not None:
        return "rcd_trip_5x_ms"
    return "rcd_half_no_trip" if read.rcd_half_no_trip is not None else None
