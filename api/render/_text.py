"""Making text from a readings file safe for the place it is shown.

Invariants:
- Board names, circuit names and details come from users' files, so nothing
  here trusts them: XML gets only characters XML 1.0 allows (§2.2 Char), a
  terminal gets no control characters (an ESC could rewrite the screen).
- Numbers are shown the same way in every format: six significant figures at
  most (the body already rounds to six), no float noise, no exponent for
  ordinary readings.
"""

from __future__ import annotations

import re
from typing import Any

__all__ = ["REPLACEMENT", "fmt_value", "printable", "xml_safe"]

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
