"""Where the delivery worker runs: a thread in each gunicorn worker, or ``ohmtally deliver``.

Invariants:
- ``ohmtally serve`` installs :func:`post_worker_init` and :func:`worker_exit`
  as gunicorn hooks: each worker process starts one daemon delivery thread
  after it has loaded the app (never in the master, which forks: a thread
  there would be copied into no child and could hold locks across fork).
  Several threads are safe because rows are claimed with leases
  (``api.webhooks.delivery``); more workers only mean more senders.
- ``OHMTALLY_WEBHOOK_WORKER=off`` starts no thread; run ``ohmtally deliver``.
- The thread never shares a request's session or blocks a request.
- The thread opens signing secrets with the app's own server key
  (:func:`api.webhooks.sealing.box_for_app`), the one its requests seal with.
"""

from __future__ import annotations

from typing import Any

from flask import Flask

from api.webhooks.delivery import DeliveryThread, config_from_settings
from api.webhooks.sealing import box_for_app

__all__ = ["post_worker_init", "start_delivery_thread", "stop_delivery_thread", "worker_exit"]

_KEY = "ohmtally.webhooks.thread"


def start_delivery_thread(app: Flask, *, poll_s: float = 1.0) -> DeliveryThread | None:
    settings = app.extensions["ohmtally.settings"]
    if not settings.webhook_worker:
        return None
    config = config_from_settings(settings, box=box_for_app(app))
    thread = DeliveryThread(app.extensions["ohmtally.db"], config, poll_s=poll_s)
    thread.start()
    app.extensions[_KEY] = thread
    return thread


def stop_delivery_thread(app: Flask, timeout: float = 5.0) -> None:
    thread: DeliveryThread | None = app.extensions.pop(_KEY, None)
    if thread is not None:
        thread.stop(timeout)


def post_worker_init(worker: Any) -> None:
    """gunicorn hook: the worker has loaded the app (``worker.wsgi``); start its sender."""
    start_delivery_thread(worker.wsgi)


def worker_exit(_server: Any, worker: Any) -> None:
    """gunicorn hook: stop the sender before the worker goes (an in-flight send may finish)."""
    app = getattr(worker, "wsgi", None)
    if isinstance(app, Flask):
        stop_delivery_thread(app)
