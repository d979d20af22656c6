"""ohmtally's engine: circuit records and a ruleset in, verdicts out. No I/O.

See ``engine/README.md`` for the boundary this package keeps.
"""

from __future__ import annotations

from .compact import CompactVerdict
from .errors import EngineError, ReadingError, RecordError, RulesetError
from .fields import FIELDS, MEASURED_FIELDS, FieldSpec
from .marks import Mark, MarkedCell, cell_mark
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
from .site import (
    BOARD_FIELDS,
    INSTALLATION_FIELDS,
    SITE_FIELDS,
    BoardRecord,
    InstallationRecord,
    Site,
    SiteError,
    board_to_dict,
    build_board,
    build_installation,
    build_site,
    coerce_site_field,
    installation_to_dict,
)
from .summary import NOTICE, summarise
from .verify import verify, verify_compact
from .visit_changes import visit_changes
from .visits import PreviousVisit
from .words import FIELD_WORDS, word_for

__version__ = "0.1.0"

__all__ = [
    "BOARD_FIELDS",
    "CHECK_IDS",
    "DEFAULT_RULESET",
    "FIELDS",
    "FIELD_WORDS",
    "INSTALLATION_FIELDS",
    "MEASURED_FIELDS",
    "NOTICE",
    "SITE_FIELDS",
    "BoardRecord",
    "CheckResult",
    "CircuitRecord",
    "CompactVerdict",
    "EngineError",
    "Entry",
    "FieldError",
    "FieldSpec",
    "InstallationRecord",
    "Mark",
    "MarkedCell",
    "Outcome",
    "PreviousVisit",
    "Reading",
    "ReadingError",
    "RecordError",
    "Ruleset",
    "RulesetError",
    "Site",
    "SiteError",
    "Verdict",
    "__version__",
    "board_to_dict",
    "build_board",
    "build_installation",
    "build_record",
    "build_site",
    "builtin_ruleset_ids",
    "cell_mark",
    "coerce_field",
    "coerce_site_field",
    "installation_to_dict",
    "load_builtin",
    "load_ruleset",
    "parse_reading",
    "record_to_dict",
    "ruleset_from_data",
    "summarise",
    "verify",
    "verify_compact",
    "visit_changes",
    "word_for",
    "worst",
]
