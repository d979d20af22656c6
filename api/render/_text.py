"""Making text from a readings file safe for the place it is shown.

Invariants:
- Board names, circuit names and details come from users' files, so nothing
  here trusts them: XML gets only characters XML 1.0 allows (§2.2 Char), a
  terminal gets no control characters (an ESC could rewrite the screen).
- Data formats (CSV) show numbers as the body has them: six significant
  figures at most, no float noise, no exponent for ordinary readings.
- Formats for people (table, JUnit messages) show a number as a test meter's
  display would (:func:`meter_number`): three significant figures, never
  losing a digit before the decimal point, at most three decimals (0.367 Ω,
  17.3 V, 338 ms, 999 MΩ, 0.006 Ω), trailing zeros dropped. A value and its
  limit that differ are never shown equal: :func:`meter_pair` adds digits
  (up to six significant figures) until they differ, so a 1.3749 Ω reading
  against a 1.37 Ω limit reads ``1.375`` vs ``1.37``.
"""

from __future__ import annotations

import re
from typing import Any

__all__ = ["REPLACEMENT", "fmt_value", "meter_number", "meter_pair", "percent", "printable", "xml_safe"]

REPLACEMENT = "\ufffd"

# XML 1.0 §2.2: Char ::= #x9 | #xA | #xD | [#x20-#xD7FF] | [#xE000-#xFFFD] | [#x10000-#x10FFFF]
_NOT_XML_CHAR = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")
# C0 and C1 controls and DEL: a terminal acts on them instead of showing them.
_CONTROL = re.compile("[\u0000-\u001f\u007f-\u009f]")


def xml_safe(text: str) -> str:
    return _NOT_XML_CHAR.sub(REPLACEMENT, text)


def printable(text: str) -> str:
    """One line with every control character shown as ``\\xNN`` rather than acted on."""
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def fmt_value(value: Any) -> str:
    """A cell for a number or text; ``None`` is empty."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def meter_number(value: Any, figures: int = 3) -> str:
    """A number as a meter shows it (see the module's invariants); text and None as :func:`fmt_value`."""
    if isinstance(value, bool) or not isinstance(value, int | float):
        return fmt_value(value)
    if value == 0 or value != value or value in (float("inf"), float("-inf")):
        return fmt_value(float(value)) if isinstance(value, float) else str(value)
    whole = len(str(int(abs(value)))) if abs(value) >= 1 else 0
    zeros = 0 if whole else _leading_zeros(abs(value))
    decimals = max(0, figures - whole) if whole else figures + zeros
    decimals = min(decimals, 3 if figures <= 3 else figures)
    if not whole and decimals <= zeros:  # never show a reading that is not zero as 0
        decimals = zeros + 1
    text = f"{value:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return text


def _leading_zeros(value: float) -> int:
    """Zeros between the decimal point and the first significant digit of 0 < value < 1."""
    count = 0
    while value < 0.1 and count < 12:
        value *= 10
        count += 1
    return count


def meter_pair(value: Any, limit: Any) -> tuple[str, str]:
    """``value`` and ``limit`` as a meter shows them, with digits added until different numbers read
    differently (six significant figures at most)."""
    for figures in range(3, 7):
        shown = meter_number(value, figures), meter_number(limit, figures)
        if not (isinstance(value, int | float) and isinstance(limit, int | float)) or value == limit \
                or shown[0] != shown[1]:
            return shown
    return fmt_value(value), fmt_value(limit)


def percent(fraction: Any) -> str:
    """A margin (a signed fraction of the limit) as a whole percentage: ``0.19`` → ``19 %``."""
    if isinstance(fraction, bool) or not isinstance(fraction, int | float):
        return fmt_value(fraction)
    return f"{round(fraction * 100):d} %"
