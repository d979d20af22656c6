"""Test harness for capture: a fake readings API, a fault-injecting proxy, a pty meter.

The fake API keeps the contract's shape for ``POST /v1/jobs/<id>/readings``
(``accepted``, ``rejected`` with body line numbers, ``verdicts``) and honours
``Idempotency-Key`` as the IETF draft says (a repeat returns the first answer,
changes nothing). The proxy forwards to any upstream (the fake, or a real
``ohmtally serve``) and answers from a script of faults instead, when told to.
The tests at the bottom check the harness itself, so a fault test cannot pass
because the harness forgot to inject the fault.
"""

from __future__ import annotations

import json
import os
import socket
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager, suppress
from dataclasses import dataclass, field
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from typing import Any

import httpx

__all__ = ["FakeApi", "FaultProxy", "PtyMeter", "free_port", "wait_until"]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def wait_until(predicate: Callable[[], bool], timeout_s: float = 10.0, step_s: float = 0.05) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(step_s)
    return predicate()


class _Server(ThreadingHTTPServer):
    daemon_threads = True
    allow_reuse_address = True


@contextmanager
def _serving(handler: type[BaseHTTPRequestHandler], port: int) -> Iterator[_Server]:
    server = _Server(("127.0.0.1", port), handler)
    thread = threading.Thread(target=server.serve_forever, kwargs={"poll_interval": 0.05}, daemon=True)
    thread.start()
    try:
        yield server
    finally:
        server.shutdown()
        server.server_close()
        thread.join(timeout=5)


@dataclass
class FakeApi:
    """In-memory readings API: stores each accepted line once per job, in arrival order."""

    port: int = field(default_factory=free_port)
    lines: dict[str, list[str]] = field(default_factory=dict)
    seen_keys: dict[str, tuple[bytes, int, bytes]] = field(default_factory=dict)
    posts: list[dict[str, Any]] = field(default_factory=list)
    _server: _Server | None = None
    _stack: Any = None

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}"

    def start(self) -> FakeApi:
        self._stack = _serving(self._handler(), self.port)
        self._server = self._stack.__enter__()
        return self

    def stop(self) -> None:
        if self._stack is not None:
            self._stack.__exit__(None, None, None)
            self._stack = None

    def answer(self, job: str, body: bytes, key: str | None) -> tuple[int, bytes]:
        if key and key in self.seen_keys:
            first_body, status, payload = self.seen_keys[key]
            if first_body != body:
                return 422, b'{"code": "idempotency_key_reused", "detail": "different body"}'
            return status, payload
        accepted = 0
        rejected: list[dict[str, Any]] = []
        verdicts: list[dict[str, Any]] = []
        for number, text in enumerate(body.decode("utf-8").splitlines(), start=1):
            if text.startswith("#"):  # a comment or a context directive: not a reading
                continue
            pairs = dict(p.split("=", 1) for p in text.split() if "=" in p)
            if "board" not in pairs or "circuit" not in pairs:
                rejected.append({"line": number, "code": "no_key", "reason": "board and circuit needed"})
                continue
            accepted += 1
            self.lines.setdefault(job, []).append(text)
            verdicts.append({"board": pairs["board"], "circuit": pairs["circuit"],
                             "outcome": "fail" if pairs.get("outcome") == "fail" else "pass", "checks": []})
        payload = json.dumps({"accepted": accepted, "rejected": rejected, "verdicts": verdicts,
                              "upload": len(self.posts), "notice": "decision aid"}).encode()
        if key:
            self.seen_keys[key] = (body, 200, payload)
        return 200, payload

    def _handler(self) -> type[BaseHTTPRequestHandler]:
        api = self

        class Handler(BaseHTTPRequestHandler):
            def log_message(self, format: str, *args: Any) -> None:
                pass

            def do_POST(self) -> None:
                body = self.rfile.read(int(self.headers.get("Content-Length") or 0))
                parts = self.path.split("?")[0].strip("/").split("/")
                key = self.headers.get("Idempotency-Key")
                api.posts.append({"path": self.path, "key": key, "body": body})
                if len(parts) == 4 and parts[:2] == ["v1", "jobs"] and parts[3] == "readings":
                    status, payload = api.answer(parts[2], body, key)
                else:
                    status, payload = 404, b'{"code": "not_found"}'
                self.send_response(status)
                self.send_header("Content-Type", "application/json")
                self.send_header("Content-Length", str(len(payload)))
                self.end_headers()
                self.wfile.write(payload)

        return Handler


@dataclass
class FaultProxy:
    """Forwards every request to ``upstream`` unless the next scripted fault says otherwise.

    ``refuse_with = 503`` answers every POST so until cleared. A fault is ``{"status": 500}``,
    ``{"status": 429, "retry_after": "1"}``,
    ``{"status": 400, "code": "..."}`` (answered without forwarding), or
    ``{"after": 500}`` (forwarded, so the server did store it, then answered 500:
    the lost-answer case the Idempotency-Key exists for), or ``{}`` (forwarded as is).
    """

    upstream: str
    port: int = field(default_factory=free_port)
    faults: list[dict[str, Any]] = field(default_factory=list)
    injected: list[dict[str, Any]] = field(default_factory=list)
    answered: list[tuple[str | None, int]] = field(default_factory=list)  # (Idempotency-Key, status)
    refuse_with: int | None = None  # answer every POST with this status (a server that is down)
    _stack: Any = None

    @property
    def url(self) -> str:
        return f"http://127.0.0.1:{self.port}"

    def start(self) -> FaultProxy:
        self._stack = _serving(self._handler(), self.port)
        self._stack.__enter__()
        return self

    def stop(self) -> None:
        if self._stack is not None:
            self._stack.__exit__(None, None, None)
            self._stack = None

    def _handler(self) -> type[BaseHTTPRequestHandler]:
        proxy = self

        class Handler(BaseHTTPRequestHandler):
            def log_message(self, format: str, *args: Any) -> None:
                pass

            def _relay(self, method: str) -> None:
                body = self.rfile.read(int(self.headers.get("Content-Length") or 0))
                fault = proxy.faults.pop(0) if (method == "POST" and proxy.faults) else None
                if method == "POST" and proxy.refuse_with and fault is None:
                    fault = {"status": proxy.refuse_with}
                if fault is not None:
                    proxy.injected.append(fault)
                if fault is not None and "status" in fault:
                    payload = json.dumps({"code": fault.get("code", "injected"),
                                          "detail": f"injected {fault['status']}"}).encode()
                    self._send(fault["status"], payload, {"Retry-After": fault.get("retry_after")})
                    return
                headers = {k: v for k, v in self.headers.items()
                           if k.lower() not in ("host", "content-length")}
                try:
                    resp = httpx.request(method, proxy.upstream + self.path, content=body, headers=headers,
                                         timeout=10)
                except httpx.HTTPError:
                    self._send(502, b'{"code": "upstream_down"}', {})
                    return
                status = fault.get("after", resp.status_code) if fault else resp.status_code
                self._send(status, resp.content, {"Content-Type": resp.headers.get("content-type")})

            def _send(self, status: int, payload: bytes, headers: dict[str, str | None]) -> None:
                if self.command == "POST":
                    proxy.answered.append((self.headers.get("Idempotency-Key"), status))
                self.send_response(status)
                for name, value in headers.items():
                    if value:
                        self.send_header(name, value)
                self.send_header("Content-Length", str(len(payload)))
                self.end_headers()
                self.wfile.write(payload)

            def do_POST(self) -> None:
                self._relay("POST")

            def do_GET(self) -> None:
                self._relay("GET")

        return Handler


class PtyMeter:
    """The meter's end of a pseudo-terminal pair; ``port`` is the device path capture opens.

    ``unplug()`` closes both ends (the device vanishes, as a pulled USB adapter);
    ``replug()`` makes a new pair and returns its new path.
    """

    def __init__(self) -> None:
        self.master = -1
        self.slave = -1
        self.port = ""
        self.replug()

    def replug(self) -> str:
        import tty

        self.master, self.slave = os.openpty()
        tty.setraw(self.slave)  # no echo, no line discipline: bytes as a serial line carries them
        self.port = os.ttyname(self.slave)
        return self.port

    def send(self, data: str | bytes) -> None:
        os.write(self.master, data.encode() if isinstance(data, str) else data)

    def unplug(self) -> None:
        for fd in (self.master, self.slave):
            with suppress(OSError):
                os.close(fd)
        self.master = self.slave = -1


def test_fake_api_honours_idempotency_key() -> None:
    """A repeat with the same key and body returns the first answer and stores nothing new (IETF
    Idempotency-Key draft, as the contract says the real API will)."""
    api = FakeApi()
    first = api.answer("J", b"board=DB1 circuit=1 zs_ohm=0.3\n", "k1")
    assert api.answer("J", b"board=DB1 circuit=1 zs_ohm=0.3\n", "k1") == first
    assert api.lines == {"J": ["board=DB1 circuit=1 zs_ohm=0.3"]}
    assert api.answer("J", b"other\n", "k1")[0] == 422


def test_proxy_injects_then_forwards() -> None:
    """The proxy answers the scripted status without forwarding, then forwards the next request."""
    api = FakeApi().start()
    proxy = FaultProxy(api.url, faults=[{"status": 503}]).start()
    try:
        url = proxy.url + "/v1/jobs/J/readings"
        assert httpx.post(url, content=b"board=A circuit=1\n").status_code == 503
        assert api.lines == {}
        assert httpx.post(url, content=b"board=A circuit=1\n").status_code == 200
        assert api.lines == {"J": ["board=A circuit=1"]}
    finally:
        proxy.stop()
        api.stop()
