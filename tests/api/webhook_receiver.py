"""A webhook receiver on a loopback port (http.server in a thread) that records every delivery.

It can be stopped and started again on the same port (a receiver that is
down refuses connections, as a real one would), and told to answer the next
N deliveries with an error after recording them (a lost answer).
"""

from __future__ import annotations

import threading
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

from api.webhooks.delivery import DeliveryConfig

__all__ = ["ALL_EVENTS", "FAST", "Receipt", "Receiver"]

ALL_EVENTS = ["job.created", "readings.accepted", "verdict.changed"]
# Delivery settings for tests: loopback allowed, retries in tens of milliseconds.
FAST = DeliveryConfig(allow_private=True, timeout_s=2, retry_base_s=0.05, retry_max_s=0.2)


@dataclass(frozen=True, slots=True)
class Receipt:
    path: str
    headers: dict[str, str]
    body: bytes


@dataclass
class Receiver:
    port: int = 0
    receipts: list[Receipt] = field(default_factory=list)
    fail_next: int = 0  # answer this many deliveries 500 (after recording them)
    _server: ThreadingHTTPServer | None = None
    _lock: threading.Lock = field(default_factory=threading.Lock)

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}/hook"

    def start(self) -> Receiver:
        receiver = self

        class Handler(BaseHTTPRequestHandler):
            def do_POST(self) -> None:
                length = int(self.headers.get("Content-Length") or 0)
                body = self.rfile.read(length)
                with receiver._lock:
                    receiver.receipts.append(Receipt(self.path, dict(self.headers.items()), body))
                    failing = receiver.fail_next > 0
                    receiver.fail_next -= 1 if failing else 0
                self.send_response(500 if failing else 204)
                self.send_header("Content-Length", "0")
                self.end_headers()

            def log_message(self, *_args: Any) -> None:
                pass

        self._server = ThreadingHTTPServer(("127.0.0.1", self.port), Handler)
        self.port = self._server.server_address[1]
        threading.Thread(target=self._server.serve_forever, kwargs={"poll_interval": 0.05},
                         daemon=True).start()
        return self

    def stop(self) -> None:
        if self._server is not None:
            self._server.shutdown()
            self._server.server_close()
            self._server = None

    def events(self) -> list[tuple[str, str]]:
        """(event type, event id) of every receipt, in arrival order."""
        with self._lock:
            return [(r.headers["Ohmtally-Event-Type"], r.headers["webhook-id"]) for r in self.receipts]
