"""``ohmtally verify FILE…``: offline verification, no server.

The adapter is chosen from each file's extension (``.json`` → JSON records,
``.csv`` → ``csv``, ``.txt``/``.log`` → ``lines``) unless ``--adapter`` is given.
``--format json`` prints exactly the body ``POST /v1/verify`` returns.

Exit status: 1 if any circuit fails; else 2 if any input was rejected or
unreadable; else 0. A failing circuit wins over rejected input because it is
the finding a pipeline must never miss.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

from engine import (
    CircuitRecord,
    EngineError,
    Outcome,
    Ruleset,
    load_ruleset,
    ruleset_from_data,
    verify,
)

from .bodies import verify_body
from .cli import EXIT_BAD_INPUT, EXIT_FAIL, EXIT_OK, EXIT_USAGE
from .intake import records_from_objects
from .render import FORMATS, render

__all__ = ["register", "run"]


def register(sub: Any) -> None:
    p = sub.add_parser("verify", help="verify readings files offline")
    p.add_argument("files", nargs="+", metavar="FILE")
    p.add_argument("--adapter", help="adapter name (default: from the file extension)")
    p.add_argument("--profile", help="mapping or line profile for the adapter")
    p.add_argument("--ruleset", help="ruleset id, or a path to a ruleset JSON file")
    p.add_argument("--format", choices=FORMATS, default="table")
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
                  ) -> tuple[list[CircuitRecord], list[dict[str, Any]]]:
    from adapters.registry import adapter_for_extension, get_adapter

    from adapters import AdapterOptions, collect

    chosen = get_adapter(adapter) if adapter else adapter_for_extension(path.suffix)
    with path.open("rb") as stream:
        got = collect(chosen.read(stream, AdapterOptions(profile=profile)))
    return got.records, [e.as_dict() for e in got.errors]


def run(args: argparse.Namespace) -> int:
    records: list[CircuitRecord] = []
    rejected: list[dict[str, Any]] = []
    ruleset_id: str | None = None
    try:
        for name in args.files:
            path = Path(name)
            if not path.is_file():
                print(f"ohmtally verify: no such file: {name}", file=sys.stderr)
                return EXIT_USAGE
            use_json = (args.adapter in (None, "json") and path.suffix.lower() == ".json")
            if use_json:
                got, bad, file_ruleset = _read_json(path)
                ruleset_id = ruleset_id or file_ruleset
            else:
                got, bad = _read_adapter(path, args.adapter, args.profile)
            records.extend(got)
            rejected.extend({"file": name, **b} for b in bad)
        ruleset = _ruleset(args.ruleset or ruleset_id)
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        print(f"ohmtally verify: cannot read input: {exc}", file=sys.stderr)
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
    body = verify_body(ruleset, verdicts, rejected)
    sys.stdout.write(render(body, args.format))
    if any(v.outcome is Outcome.FAIL for v in verdicts):
        return EXIT_FAIL
    if rejected:
        return EXIT_BAD_INPUT
    return EXIT_OK
