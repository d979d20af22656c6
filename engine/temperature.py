"""Conductor resistance against temperature.

F = (1 + α(θmax − 20)) / (1 + α(θtest − 20)) turns a resistance measured at the
test temperature into the resistance at the maximum operating temperature.
With α = 0.004 /K (the ruleset's choice, see ``temperature.json``) it gives
1.20 for 70 °C and 1.28 for 90 °C from 20 °C.
"""

from __future__ import annotations

__all__ = ["resistance_ratio", "temperature_factor"]


def resistance_ratio(alpha: float, theta_c: float, reference_c: float = 20.0) -> float:
    """R(θ)/R(reference) = 1 + α(θ − reference)."""
    return 1.0 + alpha * (theta_c - reference_c)


def temperature_factor(alpha: float, theta_max_c: float, theta_test_c: float) -> float:
    """F: the multiplier from a resistance at ``theta_test_c`` to one at ``theta_max_c``."""
    return resistance_ratio(alpha, theta_max_c) / resistance_ratio(alpha, theta_test_c)
