"""The engine's one root exception and its subclasses.

Failures of the *installation* are never exceptions: they are check results.
Exceptions here mean the *input* could not be understood (a reading string, a
record, a ruleset file); each carries a stable ``code`` a client can act on.
"""

from __future__ import annotations

__all__ = ["EngineError", "ReadingError", "RecordError", "RulesetError"]


class EngineError(Exception):
    """Root of every error the engine raises."""

    code = "engine_error"

    def __init__(self, message: str, *, field: str | None = None, text: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.field = field
        self.text = text

    def as_dict(self) -> dict[str, str]:
        out = {"code": self.code, "message": self.message}
        if self.field is not None:
            out["field"] = self.field
        if self.text is not None:
            out["text"] = self.text
        return out


class ReadingError(EngineError):
    """A reading string could not be parsed, or its unit does not fit the field."""

    code = "bad_reading"


class RecordError(EngineError):
    """A circuit record field is unknown or has a value of the wrong kind."""

    code = "bad_record"


class RulesetError(EngineError):
    """A ruleset file is malformed, or a value the rules need is missing from it."""

    code = "bad_ruleset"
