"""``ohmtally verify FILE…``: offline verification, no server.

The adapter is chosen from each file's extension (``.json`` → JSON records,
``.csv`` → ``csv``, ``.txt``/``.log`` → ``lines``) unless ``--adapter`` is given.
``--format json`` prints exactly the body ``POST /v1/verify`` returns;
``junit`` and ``csv`` are for pipelines and spreadsheets (see api/render/).

``--fail-on fail|investigate|incomplete`` (default ``fail``) is the least
severe outcome that fails; ``--warn-on investigate|incomplete|none`` (default
``incomplete``) the least severe that warns (JUnit ``<skipped>``, ``→ warn`` in
the table). Fail wins over warn.

Exit status: 1 if any circuit fails under the policy; else 2 if any input was
rejected or a file could not be read; else 0; 3 for usage (bad option, unknown
ruleset, adapter or profile). A failing circuit wins over rejected input: both
are non-zero, so a pipeline stops either way, and 1 names the finding that must
never be missed; the rejected lines are still in every format's output. An
unreadable file is reported as rejected input and the other files are still
verified, so one bad file never hides the circuits in the others.
"""

from __future__ import annotations

import argparse
import gc
import json
import os
import sys
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from rich.console import Console

from adapters import AdapterOptions, collect
from adapters.registry import adapter_for_extension, get_adapter
from api.answers import compact_body, verify_body
from api.cli import EXIT_BAD_INPUT, EXIT_FAIL, EXIT_OK, EXIT_USAGE
from api.cli.progress import SILENT, Reporter, counted, progress_for, verify_in_steps
from api.intake.bodies import site_of_facts
from api.intake.json_document import JsonSyntaxError, parse_strict
from api.intake.site_document import FactPart, read_site_document
from api.render import (
    FAIL_ON_CHOICES,
    FORMATS,
    WARN_ON_CHOICES,
    Policy,
    policy_from_names,
    render,
    rich_table,
)
from engine import (
    CircuitRecord,
    EngineError,
    Ruleset,
    board_to_dict,
    installation_to_dict,
    load_ruleset,
    ruleset_from_data,
    verify,
)

__all__ = ["register", "run"]


def register(sub: Any) -> None:
    p = sub.add_parser("verify", help="verify readings files offline")
    p.add_argument("files", nargs="+", metavar="FILE")
    p.add_argument("--adapter", help="adapter name (default: from the file extension)")
    p.add_argument("--profile", help="mapping or line profile for the adapter")
    p.add_argument("--ruleset", help="ruleset id, or a path to a ruleset JSON file")
    p.add_argument("--format", choices=FORMATS, default="table")
    p.add_argument("--view", choices=("full", "compact"), default="full",
                   help="compact: per check [legend index, outcome, value, relation, limit] with a legend, "
                        "no sentences (with --format json only; as POST /v1/verify?view=compact)")
    p.add_argument("--fail-on", choices=FAIL_ON_CHOICES, default="fail",
                   help="least severe outcome that fails (exit 1, JUnit <failure>)")
    p.add_argument("--warn-on", choices=WARN_ON_CHOICES, default="incomplete",
                   help="least severe outcome that warns (JUnit <skipped>); none: never")
    p.add_argument("--fail-on-warning", action="store_true",
                   help="exit 2 when the input carried a name read as nothing (an unknown or ambiguous "
                        "column or key), as for rejected input")
    p.add_argument("--decimal", choices=("comma", "point"), default=None,
                   help="the files' decimal separator (default: as the profile or a "
                        "'#%% decimal=' line says; CSV detects it)")
    p.set_defaults(func=run)


def _ruleset(spec: str | None) -> Ruleset:
    if spec and (spec.endswith(".json") or Path(spec).is_file()):
        return ruleset_from_data(json.loads(Path(spec).read_text(encoding="utf-8")), origin=spec)
    return load_ruleset(spec)


@dataclass(slots=True)
class _Read:
    """What the files given held, together: records, the facts they state, refusals and warnings."""

    records: list[CircuitRecord] = field(default_factory=list)
    facts: list[FactPart] = field(default_factory=list)
    rejected: list[dict[str, Any]] = field(default_factory=list)
    warnings: list[dict[str, Any]] = field(default_factory=list)
    ruleset_id: str | None = None


_CLI_ROWS = 10_000_000  # the strict parser's structure bound for a file on the user's own disk


def _read_json(path: Path, found: _Read, reporter: Reporter) -> None:
    """A JSON site document, read as the API reads a JSON body: strictly (depth, repeated names,
    number range), unknown names as warnings, and refused whole if any value cannot be taken."""
    raw = path.read_bytes()
    reporter.reading(str(path), len(raw))(len(raw))
    text = raw.decode("utf-8-sig")
    try:
        parsed = parse_strict(raw, text, max_rows=_CLI_ROWS)
    except JsonSyntaxError as exc:
        reason = f"not valid JSON: {exc.msg} at line {exc.line} column {exc.column}"
        print(f"ohmtally verify: cannot read {path}: {reason}", file=sys.stderr)
        found.rejected.append({"file": str(path), "pointer": "", "line": exc.line, "code": "unreadable",
                               "reason": reason})
        return
    if parsed.problems:
        found.rejected.extend({"file": str(path), **p} for p in parsed.problems)
        return
    document = read_site_document(parsed.value)
    found.warnings.extend({"file": str(path), **w} for w in document.warnings)
    if document.rejected:  # all or nothing, as POST /v1/verify answers the same document
        found.rejected.extend({"file": str(path), **r} for r in document.rejected)
        print(f"ohmtally verify: {path}: {len(document.rejected)} field(s) could not be taken; the file "
              "was not verified (JSON documents are all or nothing)", file=sys.stderr)
        return
    found.records.extend(document.records)
    found.facts.extend(document.facts)
    found.ruleset_id = found.ruleset_id or document.ruleset


def _read_adapter(path: Path, adapter: str | None, profile: str | None, decimal: bool | None,
                  found: _Read, reporter: Reporter) -> None:
    chosen = get_adapter(adapter) if adapter else adapter_for_extension(path.suffix)
    with path.open("rb") as raw:
        stream = counted(raw, reporter.reading(str(path), path.stat().st_size))
        got = collect(chosen.read(stream, AdapterOptions(profile=profile, decimal_comma=decimal)))
    found.records.extend(got.records)
    found.rejected.extend({"file": str(path), **e.as_dict()} for e in got.errors)
    found.warnings.extend({"file": str(path), **w.as_dict()} for w in got.warnings)
    if got.installation is not None:
        found.facts.append(FactPart("installation", "", installation_to_dict(got.installation), str(path)))
    for board in got.boards:
        fields = board_to_dict(board)
        fields.pop("board", None)
        found.facts.append(FactPart("board", board.board, fields, str(path)))


def _generated_at() -> datetime | None:
    """SOURCE_DATE_EPOCH (reproducible-builds.org) pins the JUnit timestamp; else now."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "")
    return datetime.fromtimestamp(int(epoch), UTC) if epoch.isdigit() else None


def _read_files(args: argparse.Namespace, reporter: Reporter) -> _Read:
    found = _Read()
    decimal = {"comma": True, "point": False}.get(args.decimal or "")
    for name in args.files:
        path = Path(name)
        try:
            if args.adapter in (None, "json") and path.suffix.lower() == ".json":
                _read_json(path, found, reporter)
            else:
                _read_adapter(path, args.adapter, args.profile, decimal, found, reporter)
        except (OSError, UnicodeDecodeError) as exc:
            reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
            print(f"ohmtally verify: cannot read {name}: {reason}", file=sys.stderr)
            found.rejected.append({"file": name, "pointer": "", "code": "unreadable", "reason": reason})
    return found


def _say_warnings(warnings: list[dict[str, Any]]) -> None:
    for warning in warnings:
        where = f"line {warning['line']}" if "line" in warning else warning.get("pointer") or "?"
        print(f"ohmtally verify: warning: {warning.get('file', '')}:{where}: {warning['reason']}",
              file=sys.stderr)


def _write(body: dict[str, Any], fmt: str, policy: Policy) -> None:
    if fmt == "table" and sys.stdout.isatty():
        Console().print(rich_table(body, policy))
        return
    text, _media_type = render(body, fmt, policy, generated_at=_generated_at())
    sys.stdout.write(text)
    if fmt == "csv":  # CSV has no place for prose: the caution goes to the person, not the parser
        print("CAUTION: " + body["notice"], file=sys.stderr)


def run(args: argparse.Namespace) -> int:
    # This process is one verification: the verdicts and answer it builds hold no reference
    # cycles, yet the cyclic collector walks every live object again and again as they grow
    # (half of verify's time at 30,000 circuits, tests/bench). The command owns its process,
    # so it switches the collector off (the engine itself touches no process-wide state).
    gc.disable()
    policy = policy_from_names(args.fail_on, args.warn_on)
    if args.view == "compact" and args.format != "json":
        print(f"ohmtally verify: --view compact is a JSON answer; --format {args.format} renders the full "
              "verdicts: add --format json", file=sys.stderr)
        return EXIT_USAGE
    try:
        with progress_for(args.format) as reporter:
            found = _read_files(args, reporter)
            ruleset = _ruleset(args.ruleset or found.ruleset_id)
            site = site_of_facts(found.facts)
            if args.view == "compact":
                compact = verify(found.records, ruleset, site=site, view="compact")
            else:
                verdicts = (verify(found.records, ruleset, site=site) if reporter is SILENT
                            else verify_in_steps(found.records, ruleset, site, reporter))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        print(f"ohmtally verify: cannot read the ruleset: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except EngineError as exc:
        print(f"ohmtally verify: {exc.message}", file=sys.stderr)
        return EXIT_USAGE if exc.code == "bad_ruleset" else EXIT_BAD_INPUT
    except Exception as exc:  # adapter errors: unknown adapter/profile
        code = getattr(exc, "code", None)
        if code is None:
            raise
        print(f"ohmtally verify: {exc}", file=sys.stderr)
        return EXIT_USAGE
    if args.view == "compact":
        body = compact_body(ruleset, compact, found.rejected, found.warnings, site=site)
    else:
        body = verify_body(ruleset, verdicts, found.rejected, found.warnings, site=site)
    _say_warnings(found.warnings)
    _write(body, args.format, policy)
    if policy.failing_circuits(body["verdicts"]):
        return EXIT_FAIL
    if found.rejected or (args.fail_on_warning and found.warnings):
        return EXIT_BAD_INPUT
    return EXIT_OK
