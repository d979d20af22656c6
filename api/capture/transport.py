"""The one place capture talks HTTP: post a batch of lines to ``/v1/jobs/<id>/readings``.

Invariants:
- :meth:`HttpTransport.post` returns a :class:`Reply` for every HTTP answer,
  whatever its status, and raises :class:`TransportError` only when no answer
  came (refused, reset, timed out, unreadable): the forwarder retries those.
- Every POST carries the batch's ``Idempotency-Key`` and the API key (if any)
  as ``Authorization: Bearer``; the key is never logged or put in a URL.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Protocol
from urllib.parse import quote

import httpx

__all__ = ["HttpTransport", "Reply", "Transport", "TransportError", "api_base"]


class TransportError(Exception):
    """No HTTP answer: the network or the server is down. Always worth a retry."""


@dataclass(frozen=True, slots=True, kw_only=True)
class Reply:
    status: int
    headers: Mapping[str, str] = field(default_factory=dict)
    body: Any = None  # parsed JSON, or None when the body was not JSON


class Transport(Protocol):
    def post_lines(self, body: str, *, idempotency_key: str) -> Reply: ...


def api_base(url: str) -> str:
    """``http://host:8000`` or ``http://host:8000/v1`` → ``http://host:8000/v1``."""
    url = url.rstrip("/")
    return url if url.endswith("/v1") else f"{url}/v1"


class HttpTransport:
    """Posts text/plain batches for one job through the ``lines`` adapter."""

    def __init__(self, api: str, job: str, *, api_key: str | None = None,
                 profile: str | None = None, timeout_s: float = 10.0,
                 client: httpx.Client | None = None) -> None:
        headers = {"User-Agent": "ohmtally-capture"}
        if api_key:
            headers["Authorization"] = f"Bearer {api_key}"
        self._client = client or httpx.Client(timeout=timeout_s, headers=headers)
        if client is not None:
            self._client.headers.update(headers)
        self.url = f"{api_base(api)}/jobs/{quote(job, safe='')}/readings"
        self._params = {"adapter": "lines", **({"profile": profile} if profile else {})}

    def post_lines(self, body: str, *, idempotency_key: str) -> Reply:
        try:
            resp = self._client.post(
                self.url, params=self._params, content=body.encode("utf-8"),
                headers={"Content-Type": "text/plain; charset=utf-8",
                         "Idempotency-Key": idempotency_key})
        except httpx.HTTPError as exc:  # connect, read, timeout, protocol: no usable answer
            raise TransportError(f"{type(exc).__name__}: {exc}") from exc
        try:
            parsed = resp.json()
        except ValueError:
            parsed = None
        return Reply(status=resp.status_code, headers=dict(resp.headers), body=parsed)

    def close(self) -> None:
        self._client.close()
