"""``ohmtally serve``: the API under gunicorn, started in code with the app factory.

Invariants:
- Default bind 127.0.0.1:8000. ``OHMTALLY_AUTH=off`` is refused on any bind
  that is not loopback (or a Unix socket): without keys, anyone who can reach
  the port could write to every job.
- The app is built once in the master before any worker starts, so an
  unmigrated database or a bad setting stops the server with its message
  (naming ``ohmtally db upgrade``) instead of a crash loop of workers.
- Every worker's app is told the worker count (``OHMTALLY_WORKERS``), so a
  per-process rate-limit store divides the limit between them (``api.http.limits``).
- gunicorn's control socket is off unless ``--control-socket PATH`` names one for
  this instance: its default path is shared by every instance of a user on the host.
"""

from __future__ import annotations

import argparse
import ipaddress
import sys
from collections.abc import Callable, Mapping
from functools import partial
from pathlib import Path
from typing import Any

from gunicorn.app.base import BaseApplication

from api.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_USAGE
from api.ops.multiprocess import share_metrics_between_workers

__all__ = ["is_loopback_bind", "register", "run"]

DEFAULT_BIND = "127.0.0.1:8000"


def register(sub: Any) -> None:
    p = sub.add_parser("serve", help="run the API under gunicorn")
    p.add_argument("--bind", default=DEFAULT_BIND, metavar="HOST:PORT",
                   help=f"address to listen on (default {DEFAULT_BIND}; unix:PATH for a socket)")
    p.add_argument("--workers", type=int, default=2, metavar="N", help="worker processes (default 2)")
    p.add_argument("--timeout", type=int, default=None, metavar="S",
                   help="seconds a request may run before its worker is restarted "
                        "(default OHMTALLY_REQUEST_TIMEOUT_S, 60)")
    p.add_argument("--control-socket", default=None, metavar="PATH",
                   help="gunicorn's control socket for this instance (default: none)")
    p.set_defaults(func=run)


def is_loopback_bind(bind: str) -> bool:
    if bind.startswith("unix:"):
        return True
    host = bind.rsplit(":", 1)[0] if ":" in bind else bind
    host = host.strip("[]")
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def _application(factory: Callable[[], Any], options: Mapping[str, Any]) -> Any:
    class _Server(BaseApplication):  # type: ignore[misc]
        def load_config(self) -> None:
            for key, value in options.items():
                self.cfg.set(key, value)

        def load(self) -> Any:
            return factory()

    return _Server()


def _control_socket(path: str | None) -> dict[str, Any]:
    """gunicorn's control socket: none unless asked for, at the path given. gunicorn's default is
    one path per user (``$XDG_RUNTIME_DIR/gunicorn.ctl``), so a second instance on the host
    removed the first one's; an instance's own path (its instance folder, say) cannot clash."""
    if path is None:
        return {"control_socket_disable": True}
    return {"control_socket": str(Path(path).resolve()), "control_socket_disable": False}


def run(args: argparse.Namespace) -> int:
    share_metrics_between_workers()
    # Start-up order, not cost: prometheus_client reads the multiprocess folder's variable once,
    # when it is first imported, so the app (which imports it) is imported only after it is set.
    from api.app import create_app
    from api.db.schema import SchemaNotCurrent  # start-up order (above)
    from api.http.request_log import gunicorn_logconfig  # start-up order (above)
    from api.ops.agreement import HostsDisagree, check_agreement  # start-up order (above)
    from api.settings import SettingsError, load_settings  # start-up order (above)
    from api.webhooks import runner as webhook_hooks  # start-up order (above)

    try:
        settings = load_settings()
    except SettingsError as exc:
        print(f"ohmtally serve: {exc}", file=sys.stderr)
        return EXIT_USAGE
    timeout = settings.request_timeout_s if args.timeout is None else args.timeout
    if args.workers < 1 or timeout < 1:
        print("ohmtally serve: --workers and --timeout must be at least 1", file=sys.stderr)
        return EXIT_USAGE
    if not settings.auth and not is_loopback_bind(args.bind):
        print(f"ohmtally serve: refusing OHMTALLY_AUTH=off on {args.bind}: without API keys the "
              "server may only listen on a loopback address (127.0.0.1, ::1, localhost)",
              file=sys.stderr)
        return EXIT_USAGE
    # every worker's app knows how many share its rate limit (api.http.limits: memory:// divides it)
    factory = partial(create_app, {"OHMTALLY_WORKERS": str(args.workers)})
    try:
        # fail here, once, with the message, rather than in every worker; hosts' settings agree
        check_agreement(factory(), close=True)
    except (SchemaNotCurrent, HostsDisagree) as exc:
        print(f"ohmtally serve: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except SettingsError as exc:
        print(f"ohmtally serve: {exc}", file=sys.stderr)
        return EXIT_USAGE
    options = {"bind": [args.bind], "workers": args.workers, "timeout": timeout,
               "accesslog": None, "errorlog": "-", "loglevel": settings.log_level.lower(),
               "logconfig_dict": gunicorn_logconfig(settings.log_level),
               "proc_name": "ohmtally", "graceful_timeout": 10,
               # one webhook delivery thread per worker, leased claims (api/webhooks/runner.py)
               "post_worker_init": webhook_hooks.post_worker_init, "worker_exit": webhook_hooks.worker_exit,
               **_control_socket(args.control_socket)}
    _application(factory, options).run()
    return EXIT_OK
