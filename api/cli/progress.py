"""Progress of long work on a terminal: bytes read, circuits verified, the rate and the time left.

Invariants:
- Shown only when the person can see it: stderr is a terminal and the output is not a
  program's (``--format json`` keeps both streams clean for a parser). Piped, redirected or
  under a pipeline, :func:`progress_for` gives :data:`SILENT`, which does nothing.
- Progress goes to stderr, never stdout: the report a pipeline reads is unchanged.
- Verifying in steps gives the verdicts one call gives: each step verifies some circuits
  with every record in view (``engine.verify(..., only=…)``), in the records' order.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from typing import IO, Any, Protocol

from rich.console import Console
from rich.progress import BarColumn, Progress, ProgressColumn, Task, TaskID, TextColumn, TimeRemainingColumn
from rich.text import Text

from engine import CircuitRecord, Ruleset, Site, Verdict, verify

__all__ = ["SILENT", "Reporter", "TerminalProgress", "progress_for", "verify_in_steps"]

STEP = 500  # circuits verified between two updates: a few tenths of a second each


class Reporter(Protocol):
    def reading(self, path: str, size: int) -> Callable[[int], None]: ...

    def verifying(self, total: int) -> Callable[[int], None]: ...


class _Silent:
    def reading(self, path: str, size: int) -> Callable[[int], None]:
        return _nothing

    def verifying(self, total: int) -> Callable[[int], None]:
        return _nothing


def _nothing(_count: int) -> None:
    return None


SILENT: Reporter = _Silent()


class _Amount(ProgressColumn):
    """``12.3/40.1 MB  2.1 MB/s`` for bytes, ``4,500/20,000 circuits  6,200/s`` for circuits."""

    def render(self, task: Task) -> Text:
        rate = task.speed or 0.0
        if task.fields.get("kind") == "bytes":
            mb = 1_000_000
            total = f"{task.total / mb:.1f}" if task.total else "?"
            return Text(f"{task.completed / mb:.1f}/{total} MB  {rate / mb:.1f} MB/s")
        total = f"{task.total:,.0f}" if task.total else "?"
        return Text(f"{task.completed:,.0f}/{total} circuits  {rate:,.0f}/s")


class TerminalProgress:
    """rich's progress bars on stderr: one per file read, one for the circuits verified."""

    def __init__(self, progress: Progress) -> None:
        self._progress = progress

    def _advance(self, task: TaskID) -> Callable[[int], None]:
        def advance(count: int) -> None:
            self._progress.update(task, advance=count)
        return advance

    def reading(self, path: str, size: int) -> Callable[[int], None]:
        return self._advance(self._progress.add_task(f"reading {path}", total=size or None, kind="bytes"))

    def verifying(self, total: int) -> Callable[[int], None]:
        return self._advance(self._progress.add_task("verifying circuits", total=total, kind="circuits"))


class _Counted:
    """A binary stream that reports every byte read (adapters read their input through it)."""

    def __init__(self, stream: IO[bytes], seen: Callable[[int], None]) -> None:
        self._stream, self._seen = stream, seen

    def read(self, size: int = -1) -> bytes:
        data = self._stream.read(size)
        self._seen(len(data))
        return data

    def readline(self, size: int = -1) -> bytes:
        data = self._stream.readline(size)
        self._seen(len(data))
        return data

    def __iter__(self) -> Iterator[bytes]:
        return iter(self.readline, b"")

    def __getattr__(self, name: str) -> Any:
        return getattr(self._stream, name)


def counted(stream: IO[bytes], seen: Callable[[int], None]) -> IO[bytes]:
    """``stream`` reporting each read to ``seen`` (silent reporters cost one call per read)."""
    return stream if seen is _nothing else _Counted(stream, seen)  # type: ignore[return-value]


@contextmanager
def progress_for(fmt: str) -> Iterator[Reporter]:
    """Bars on a terminal for a person's format; silence for a program's or off a terminal."""
    if fmt == "json" or not sys.stderr.isatty():
        yield SILENT
        return
    columns = (TextColumn("{task.description}"), BarColumn(), _Amount(), TimeRemainingColumn())
    with Progress(*columns, console=Console(stderr=True), transient=True) as progress:
        yield TerminalProgress(progress)


def verify_in_steps(records: Sequence[CircuitRecord], ruleset: Ruleset, site: Site,
                    reporter: Reporter) -> list[Verdict]:
    """``verify(records, ruleset, site=site)``, in steps that each report how many were verified."""
    if reporter is SILENT:
        return verify(records, ruleset, site=site)
    keys = list(dict.fromkeys(r.key for r in records))  # a circuit given twice is one verdict, as in verify
    advance = reporter.verifying(len(keys))
    verdicts: list[Verdict] = []
    for start in range(0, len(keys), STEP):
        step = set(keys[start:start + STEP])
        verdicts += verify(records, ruleset, site=site, only=step)
        advance(len(step))
    return verdicts
