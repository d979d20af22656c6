"""Trusted reverse proxies: the client's address, scheme and host from ``X-Forwarded-*`` (ProxyFix).

Invariants:
- ``OHMTALLY_TRUSTED_PROXIES`` (default 0) is the number of proxies in front of
  the server that append to ``X-Forwarded-For`` / ``-Proto`` / ``-Host``. With 0 the
  headers are ignored: a client cannot choose its own address (the rate limit's
  key without an API key, and the log's ``remote_addr``).
- With *n* > 0, werkzeug's ``ProxyFix`` takes the *n*-th value from the right of each
  header, the one the outermost trusted proxy wrote, so values a client put in
  front of it are never believed. Too high a number lets a client choose its address;
  too low leaves the proxy's: set it to the hops that really exist (one nginx: 1).
- ``X-Forwarded-Port`` and ``-Prefix`` are not read: the API lives at ``/v1`` on the
  host the client named.
"""

from __future__ import annotations

from flask import Flask
from werkzeug.middleware.proxy_fix import ProxyFix

__all__ = ["init_app"]


def init_app(app: Flask, trusted_proxies: int) -> None:
    if trusted_proxies > 0:
        app.wsgi_app = ProxyFix(app.wsgi_app, x_for=trusted_proxies,  # type: ignore[method-assign]
                                x_proto=trusted_proxies, x_host=trusted_proxies)
