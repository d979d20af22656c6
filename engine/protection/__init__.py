"""Protective devices: required disconnection times and maximum Zs, from ruleset data.

Pure functions on plain values and a :class:`engine.ruleset.Ruleset`; the
checks (``engine/checks/loop_impedance.py``) read the record and call these.
A lookup that cannot be made returns :class:`Missing`, naming the fields a
record would need, never a guessed number.
"""

from __future__ import annotations

from .common import Missing, positive, round_down, round_half_up
from .devices import Device, resolve_device
from .disconnection import Disconnection, disconnection_time, earthing_system
from .max_zs import MaxZs, breaker_max_zs, fuse_max_zs, max_zs_for, rule_of_thumb_limit
from .operating_time import TimeBounds, time_bounds

__all__ = [
    "Device",
    "Disconnection",
    "MaxZs",
    "Missing",
    "TimeBounds",
    "breaker_max_zs",
    "disconnection_time",
    "earthing_system",
    "fuse_max_zs",
    "max_zs_for",
    "positive",
    "resolve_device",
    "round_down",
    "round_half_up",
    "rule_of_thumb_limit",
    "time_bounds",
]
