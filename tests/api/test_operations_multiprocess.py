"""The metrics folder `ohmtally serve` gives its workers: its own per serve, emptied at start, left
folders of dead servers removed, an operator's own folder respected.

Run in a fresh interpreter (as `serve` is): the test process has imported prometheus-client
already, and the folder must be chosen before that import.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
_CHOOSE = ("import os; from api.ops.multiprocess import share_metrics_between_workers as s; "
           "print(s()); print(os.environ.get('PROMETHEUS_MULTIPROC_DIR')); print(os.getpid())")


def _choose(env: dict[str, str]) -> list[str]:
    done = subprocess.run([sys.executable, "-c", _CHOOSE], cwd=ROOT, capture_output=True, text=True,
                          timeout=60, env={k: v for k, v in env.items() if v is not None})
    assert done.returncode == 0, done.stderr
    return done.stdout.split()


def _dead_pid() -> int:
    child = subprocess.Popen([sys.executable, "-c", "pass"])
    child.wait()
    return child.pid


def test_each_serve_gets_a_fresh_folder_and_dead_ones_are_cleared(tmp_path: Path) -> None:
    """The folder is <instance>/metrics/<pid>, set for the workers; a folder left by a dead server is
    removed; one of a live process is kept; the folder itself is removed when serve exits."""
    base = {k: v for k, v in os.environ.items() if k != "PROMETHEUS_MULTIPROC_DIR"}
    metrics = tmp_path / "metrics"
    stale = metrics / str(_dead_pid())
    stale.mkdir(parents=True)
    (stale / "counter_1.db").write_bytes(b"old counts")
    alive = metrics / str(os.getpid())
    alive.mkdir()
    chosen, variable, pid = _choose({**base, "OHMTALLY_INSTANCE_PATH": str(tmp_path)})
    assert chosen == variable == str(metrics / pid)
    assert not stale.exists() and alive.exists()
    assert not (metrics / pid).exists()  # removed by the process that made it, at its exit


def test_an_operators_own_folder_is_used_as_it_is(tmp_path: Path) -> None:
    """PROMETHEUS_MULTIPROC_DIR set by the operator: used, not emptied, nothing made in the instance."""
    own = tmp_path / "mine"
    own.mkdir()
    (own / "counter_7.db").write_bytes(b"kept")
    chosen, variable, _pid = _choose({**os.environ, "PROMETHEUS_MULTIPROC_DIR": str(own),
                                      "OHMTALLY_INSTANCE_PATH": str(tmp_path / "instance")})
    assert chosen == variable == str(own)
    assert (own / "counter_7.db").read_bytes() == b"kept"
    assert not (tmp_path / "instance").exists()
