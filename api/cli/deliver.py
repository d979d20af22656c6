"""``ohmtally deliver [--once]``: send due webhook deliveries outside ``serve``.

Invariants:
- Uses the same settings and database as ``serve`` (``OHMTALLY_*``), and the
  same leased claims, so it can run beside a server's delivery threads.
- ``--once`` sends everything due now (each job's events in order) and exits
  0; without it, it polls every ``--poll`` seconds until SIGINT/SIGTERM.
"""

from __future__ import annotations

import argparse
import signal
import sys
import threading
from typing import Any

from api.app import create_app
from api.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_USAGE
from api.db.schema import SchemaNotCurrent
from api.db.session import close_engines
from api.settings import SettingsError
from api.webhooks.delivery import config_from_settings, run_once

__all__ = ["register", "run"]


def register(sub: Any) -> None:
    p = sub.add_parser("deliver", help="send due webhook deliveries (serve does this itself)")
    p.add_argument("--once", action="store_true", help="send what is due now, then exit")
    p.add_argument("--poll", type=float, default=1.0, metavar="S",
                   help="seconds between passes without --once (default 1)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    if args.poll <= 0:
        print("ohmtally deliver: --poll must be positive", file=sys.stderr)
        return EXIT_USAGE
    try:
        app = create_app()
    except SettingsError as exc:
        print(f"ohmtally deliver: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except SchemaNotCurrent as exc:
        print(f"ohmtally deliver: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    factory = app.extensions["ohmtally.db"]
    config = config_from_settings(app.extensions["ohmtally.settings"])
    try:
        if args.once:
            attempts = run_once(factory, config)
            print(f"ohmtally deliver: {attempts} attempt(s)", file=sys.stderr)
            return EXIT_OK
        stopping = threading.Event()
        for signum in (signal.SIGINT, signal.SIGTERM):
            signal.signal(signum, lambda *_: stopping.set())
        while not stopping.is_set():
            run_once(factory, config)
            stopping.wait(args.poll)
        return EXIT_OK
    finally:
        close_engines(app)
