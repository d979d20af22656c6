"""One metrics folder per ``ohmtally serve``, so every gunicorn worker's counts are scraped together.

Invariants:
- :func:`share_metrics_between_workers` runs in ``serve`` before anything imports
  prometheus-client (it reads ``PROMETHEUS_MULTIPROC_DIR`` once, at import) and
  before gunicorn forks: every worker inherits the variable.
- The folder is ``<instance folder>/metrics/<pid of serve>``: two servers on one host
  (two ports, one instance folder) never mix their counts. It starts empty (a folder
  left by a process with the same pid is wiped) and is removed when that ``serve``
  exits; folders of servers that died without cleaning are removed at the next
  start. A dead worker's files stay until then: its counts remain in the sums, as
  a counter must never go down while the server runs.
- An operator's own ``PROMETHEUS_MULTIPROC_DIR`` is used as it is (they clean it).
- In a process that has already imported prometheus-client (``serve`` called from
  the tests' in-process runner) the choice is made: nothing is set, and the
  workers count alone (the folder would be read by no one).
"""

from __future__ import annotations

import atexit
import os
import shutil
import sys
from collections.abc import MutableMapping
from pathlib import Path

from flask import Flask

from api.settings import SettingsError, load_settings

__all__ = ["MULTIPROC_ENV", "share_metrics_between_workers"]

MULTIPROC_ENV = "PROMETHEUS_MULTIPROC_DIR"


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process: alive, and not ours to clean
        return True
    return True


def _remove(folder: Path, owner: int) -> None:
    if os.getpid() == owner:  # forked workers inherit atexit handlers: only serve itself cleans
        shutil.rmtree(folder, ignore_errors=True)


def share_metrics_between_workers(environ: MutableMapping[str, str] | None = None) -> str | None:
    """Set ``PROMETHEUS_MULTIPROC_DIR`` for this server's workers; the folder, or ``None`` when the
    settings are bad (``serve`` reports them right after)."""
    env = os.environ if environ is None else environ
    if env.get(MULTIPROC_ENV):
        return env[MULTIPROC_ENV]
    if "prometheus_client" in sys.modules:
        return None
    try:
        settings = load_settings(environ=env)
    except SettingsError:
        return None
    # Flask("api").instance_path is api.app.default_instance_path(), which cannot be imported
    # here: api.app imports prometheus-client, and this must run before that.
    base = Path(settings.instance_path or Flask("api").instance_path) / "metrics"
    base.mkdir(parents=True, exist_ok=True)
    for entry in base.iterdir():
        if entry.is_dir() and entry.name.isdigit() and not _alive(int(entry.name)):
            shutil.rmtree(entry, ignore_errors=True)
    own = base / str(os.getpid())
    shutil.rmtree(own, ignore_errors=True)
    own.mkdir()
    env[MULTIPROC_ENV] = str(own)
    atexit.register(_remove, own, os.getpid())
    return str(own)
