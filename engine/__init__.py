"""ohmtally's engine: circuit records and a ruleset in, verdicts out. No I/O.

See ``engine/README.md`` for the boundary this package keeps.
"""

from __future__ import annotations

from .errors import EngineError, ReadingError, RecordError, RulesetError
from .fields import FIELDS, MEASURED_FIELDS, FieldSpec
from .readings import Reading, parse_reading
from .records import CircuitRecord, FieldError, build_record, coerce_field, record_to_dict
from .results import CHECK_IDS, CheckResult, Outcome, Verdict, worst
from .ruleset import (
    DEFAULT_RULESET,
    Entry,
    Ruleset,
    builtin_ruleset_ids,
    load_builtin,
    load_ruleset,
    ruleset_from_data,
)
from .summary import NOTICE, summarise
from .verify import verify

__version__ = "0.1.0"

__all__ = [
    "CHECK_IDS",
    "DEFAULT_RULESET",
    "FIELDS",
    "MEASURED_FIELDS",
    "NOTICE",
    "CheckResult",
    "CircuitRecord",
    "EngineError",
    "Entry",
    "FieldError",
    "FieldSpec",
    "Outcome",
    "Reading",
    "ReadingError",
    "RecordError",
    "Ruleset",
    "RulesetError",
    "Verdict",
    "__version__",
    "build_record",
    "builtin_ruleset_ids",
    "coerce_field",
    "load_builtin",
    "load_ruleset",
    "parse_reading",
    "record_to_dict",
    "ruleset_from_data",
    "summarise",
    "verify",
    "worst",
]
