"""What the trade's notation means where a record leaves a field out, and nothing more.

Invariants:
- Inference only where the meaning is unambiguous, each reported in the
  verdict's ``inferred`` (field → value) by the circuit view that applies it;
  a field the record gives is never second-guessed:
  * ``circuit_form``: end-to-end ring readings (r1, rn, r2) mean a ring;
  * ``socket_outlets``: a ring final circuit has socket-outlets;
  * ``device_kind``: an RCBO standard (BS EN / IEC 61009) means an RCBO; a
    breaker standard or a curve letter (B, C, D) a circuit-breaker (Table 41.3);
    a fuse standard the ruleset has tables for, a fuse.
- Pure functions of the record and the ruleset.
"""

from __future__ import annotations

from collections.abc import Callable

from .records import CircuitRecord
from .ruleset import Ruleset
from .standards import fuse_standards, match_standard

__all__ = ["INFERENCES", "circuit_form", "device_kind", "socket_outlets"]

_RING_READINGS = ("ring_r1_ohm", "ring_rn_ohm", "ring_r2_ohm")


def circuit_form(record: CircuitRecord, rules: Ruleset) -> str | None:
    if any(getattr(record, name) is not None for name in _RING_READINGS):
        return "ring"
    return None


def socket_outlets(record: CircuitRecord, rules: Ruleset) -> bool | None:
    form = record.circuit_form or circuit_form(record, rules)
    return True if form == "ring" else None


def device_kind(record: CircuitRecord, rules: Ruleset) -> str | None:
    standard = record.device_standard
    if standard:
        if match_standard(standard, rules.get("breakers", "rcbo_standards", []) or []):
            return "rcbo"
        if match_standard(standard, rules.get("breakers", "standards", []) or []):
            return "breaker"
        if match_standard(standard, fuse_standards(rules)):
            return "fuse"
    if record.device_curve is not None:
        return "breaker"
    return None


INFERENCES: dict[str, Callable[[CircuitRecord, Ruleset], object]] = {
    "circuit_form": circuit_form,
    "socket_outlets": socket_outlets,
    "device_kind": device_kind,
}
