"""The ``ohmtally`` command: one sub-command per module, dispatched from here.

Invariants:
- Each sub-command module has ``register(subparsers)`` that adds its parser and
  sets ``func``; ``func(args) -> int`` is the exit status: 0 all pass, 1 a circuit
  fails, 2 bad input, 3 usage.
- Only the module of the command being run is imported (:func:`main`). The
  commands sit on very different stacks: ``verify`` needs the engine and the
  adapters (~0.15 s to import here), ``serve`` and ``demo`` Flask, SQLAlchemy,
  Alembic and gunicorn (~1 s measured with ``python -X importtime``). A field
  laptop running ``ohmtally verify`` in a loop, or a pipeline step, should not
  pay for a web server it never starts. ``ohmtally --help`` lists every command
  from :data:`COMMANDS` without importing any (a test keeps the one-line help of
  each entry equal to its module's own).
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from importlib import import_module

from engine import __version__

__all__ = ["COMMANDS", "EXIT_BAD_INPUT", "EXIT_FAIL", "EXIT_OK", "EXIT_USAGE", "build_parser", "main"]

EXIT_OK, EXIT_FAIL, EXIT_BAD_INPUT, EXIT_USAGE = 0, 1, 2, 3

# command → (its module, its one-line help), in the order `ohmtally --help` lists them.
COMMANDS: dict[str, tuple[str, str]] = {
    "verify": ("api.cli.verify", "verify readings files offline"),
    "capture": ("api.cli.capture", "read a meter's serial port and forward readings to a job"),
    "serve": ("api.cli.serve", "run the API under gunicorn"),
    "demo": ("api.cli.demo", "start a local server and post the demo site to it"),
    "db": ("api.cli.db", "database administration (migrations)"),
    "deliver": ("api.cli.deliver", "send due webhook deliveries (serve does this itself)"),
    "keys": ("api.cli.keys", "API keys: create, list, revoke"),
}


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"{self.prog}: error: {message}\n")


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """The parser; ``command``'s module registers its full parser, the others only a name and help."""
    parser = _Parser(prog="ohmtally", description="Check installation test readings "
                     "against the wiring rules (a decision aid; see the README's caution).")
    parser.add_argument("--version", action="version", version=f"ohmtally {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name, (module, help_text) in COMMANDS.items():
        if name == command:
            # The one place a command's stack is imported: see the module's invariants.
            import_module(module).register(sub)
        else:
            sub.add_parser(name, help=help_text)
    return parser


def _command_named(argv: Sequence[str]) -> str | None:
    """The sub-command ``argv`` names (its first word that is not an option), if it is one of ours."""
    for word in argv:
        if not word.startswith("-"):
            return word if word in COMMANDS else None
    return None


EXIT_BROKEN_PIPE = 128 + 13  # what a shell reports for a command ended by SIGPIPE


def main(argv: Sequence[str] | None = None) -> int:
    words = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser(_command_named(words))
    args = parser.parse_args(words)
    if not getattr(args, "func", None):
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    try:
        status: int = args.func(args)
        sys.stdout.flush()
    except BrokenPipeError:
        # The reader went away (`ohmtally capture --show | head`): stop quietly, as the
        # standard tools do, instead of a traceback. stdout is pointed at /dev/null so the
        # interpreter's own flush at exit cannot raise again (Python docs, "signal", SIGPIPE).
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_BROKEN_PIPE
    return status
