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
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from rich.console import Console

from adapters import AdapterOptions, collect
from adapters.registry import adapter_for_extension, get_adapter
from api.answers import verify_body
from api.cli import EXIT_BAD_INPUT, EXIT_FAIL, EXIT_OK, EXIT_USAGE
from api.intake.objects import records_from_objects
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
    p.add_argument("--fail-on", choices=FAIL_ON_CHOICES, default="fail",
                   help="least severe outcome that fails (exit 1, JUnit <failure>)")
    p.add_argument("--warn-on", choices=WARN_ON_CHOICES, default="incomplete",
                   help="least severe outcome that warns (JUnit <skipped>); none: never")
    p.set_defaults(func=run)


def _ruleset(spec: str | None) -> Ruleset:
    if spec and (spec.endswith(".json") or Path(spec).is_file()):
        return ruleset_from_data(json.loads(Path(spec).read_text(encoding="utf-8")), origin=spec)
    return load_ruleset(spec)


def _read_json(path: Path) -> tuple[list[CircuitRecord], list[dict[str, Any]], str | None]:
    data = json.loads(path.read_text(encoding="utf-8"))
    ruleset_id = None
    if isinstance(data, dict):
        ruleset_id = data.get("ruleset")
        circuits = data.get("circuits")
        if not isinstance(circuits, list):
            return [], [{"pointer": "/circuits", "code": "missing",
                         "reason": "expected a list under 'circuits'"}], None
        records, rejected = records_from_objects(circuits, pointer="/circuits")
    elif isinstance(data, list):
        records, rejected = records_from_objects(data, pointer="")
    else:
        return [], [{"pointer": "", "code": "bad_document",
                     "reason": "expected a list of circuits or an object with 'circuits'"}], None
    return records, rejected, ruleset_id if isinstance(ruleset_id, str) else None


def _read_adapter(path: Path, adapter: str | None, profile: str | None
                  ) -> tuple[list[CircuitRecord], list[dict[str, Any]], list[dict[str, Any]]]:
    chosen = get_adapter(adapter) if adapter else adapter_for_extension(path.suffix)
    with path.open("rb") as stream:
        got = collect(chosen.read(stream, AdapterOptions(profile=profile)))
    return got.records, [e.as_dict() for e in got.errors], [w.as_dict() for w in got.warnings]


def _generated_at() -> datetime | None:
    """SOURCE_DATE_EPOCH (reproducible-builds.org) pins the JUnit timestamp; else now."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH", "")
    return datetime.fromtimestamp(int(epoch), UTC) if epoch.isdigit() else None


def _read_files(args: argparse.Namespace, rejected: list[dict[str, Any]], warnings: list[dict[str, Any]]
                ) -> tuple[list[CircuitRecord], str | None]:
    records: list[CircuitRecord] = []
    ruleset_id: str | None = None
    for name in args.files:
        path = Path(name)
        try:
            use_json = (args.adapter in (None, "json") and path.suffix.lower() == ".json")
            if use_json:
                got, bad, file_ruleset = _read_json(path)
                ruleset_id = ruleset_id or file_ruleset
            else:
                got, bad, noted = _read_adapter(path, args.adapter, args.profile)
                warnings.extend({"file": name, **w} for w in noted)
        except (OSError, UnicodeDecodeError, json.JSONDecodeError, RecursionError) as exc:
            reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
            print(f"ohmtally verify: cannot read {name}: {reason}", file=sys.stderr)
            rejected.append({"file": name, "pointer": "", "code": "unreadable", "reason": reason})
            continue
        records.extend(got)
        rejected.extend({"file": name, **b} for b in bad)
    return records, ruleset_id


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
    rejected: list[dict[str, Any]] = []
    warnings: list[dict[str, Any]] = []
    try:
        records, ruleset_id = _read_files(args, rejected, warnings)
        ruleset = _ruleset(args.ruleset or ruleset_id)
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
    verdicts = verify(records, ruleset)
    body = verify_body(ruleset, verdicts, rejected, warnings)
    _write(body, args.format, policy)
    if policy.failing_circuits(body["verdicts"]):
        return EXIT_FAIL
    if rejected:
        return EXIT_BAD_INPUT
    return EXIT_OK
