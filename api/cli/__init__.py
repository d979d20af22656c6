"""The ``ohmtally`` command: one sub-command per module, dispatched from here.

Each sub-command module has ``register(subparsers)`` that adds its parser and
sets ``func``; ``func(args) -> int`` is the exit status. Exit statuses are
0 all pass, 1 a circuit fails, 2 bad input, 3 usage.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from importlib import import_module

__all__ = ["EXIT_BAD_INPUT", "EXIT_FAIL", "EXIT_OK", "EXIT_USAGE", "main"]

EXIT_OK, EXIT_FAIL, EXIT_BAD_INPUT, EXIT_USAGE = 0, 1, 2, 3

# Sub-command modules, in the order `ohmtally --help` lists them.
COMMAND_MODULES: tuple[str, ...] = (
    "api.cli.verify",
    "api.cli.capture",
    "api.cli.serve",
    "api.cli.demo",
    "api.cli.db",
    "api.cli.deliver",
    "api.cli.keys",
)


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"{self.prog}: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="ohmtally", description="Check installation test readings "
                     "against the wiring rules (a decision aid; see the README's caution).")
    from engine import __version__

    parser.add_argument("--version", action="version", version=f"ohmtally {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMAND_MODULES:
        import_module(name).register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    status: int = args.func(args)
    return status
