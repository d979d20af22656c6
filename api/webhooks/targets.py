"""Which URLs a webhook may call: http(s), no credentials, and public addresses only unless allowed.

Invariants:
- A target is checked when a subscription is made and again before every
  send, on the addresses DNS gives *at that moment*; while
  ``OHMTALLY_WEBHOOK_ALLOW_PRIVATE`` is off (the default) every address must be
  public by :func:`api.webhooks.addresses.refusal` (which also looks inside
  6to4, Teredo, NAT64 and IPv4-mapped addresses), so a subscriber cannot make
  the server call its own network (SSRF).
- :func:`resolve_target` returns the checked address; the sender connects to
  that address, not to a second look-up, so a name cannot re-point between
  check and send (DNS rebinding).
- Failures are :class:`TargetRefused` values with a stable ``code``:
  ``bad_url`` (the URL itself: scheme, host, credentials) or
  ``target_not_allowed`` (where it leads). The client-facing ``reason`` never
  says what a name resolved to, nor whether it resolved at all: a name that
  does not resolve and one that resolves to a private address get the same
  answer, so the API cannot be used to read the server's DNS. The full story
  is in ``detail``, for the operator's log only.
"""

from __future__ import annotations

import ipaddress
import socket
from dataclasses import dataclass
from urllib.parse import urlsplit

from api.webhooks.addresses import refusal

__all__ = ["NOT_ALLOWED", "ResolvedTarget", "TargetRefused", "check_url", "resolve_target"]

_SCHEMES = ("http", "https")
_DEFAULT_PORTS = {"http": 80, "https": 443}
NOT_ALLOWED = "target_not_allowed"
_NAME_REFUSED = ("the host does not resolve to public addresses only (loopback, private, link-local "
                 "and other special-purpose addresses are not allowed)")


class TargetRefused(ValueError):
    """A webhook URL that may not be called: ``code`` and ``reason`` for the client, ``detail`` for logs."""

    def __init__(self, code: str, reason: str, detail: str | None = None) -> None:
        super().__init__(reason)
        self.code = code
        self.reason = reason
        self.detail = detail or reason


@dataclass(frozen=True, slots=True, kw_only=True)
class ResolvedTarget:
    """A URL with the address it was checked at, for the sender to connect to."""

    url: str
    scheme: str
    host: str
    port: int
    address: str

    def pinned_url(self) -> str:
        """The URL with its host replaced by the checked address (IPv6 in brackets)."""
        parts = urlsplit(self.url)
        shown = f"[{self.address}]" if ":" in self.address else self.address
        return parts._replace(netloc=f"{shown}:{self.port}").geturl()

    def host_header(self) -> str:
        """``Host`` as the URL names it (port only when it is not the scheme's default)."""
        shown = f"[{self.host}]" if ":" in self.host else self.host
        return shown if self.port == _DEFAULT_PORTS[self.scheme] else f"{shown}:{self.port}"


def check_url(url: str) -> tuple[str, str, int]:
    """Scheme, host and port of a usable URL; :class:`TargetRefused` otherwise."""
    try:
        parts = urlsplit(url)
        port = parts.port
    except ValueError as exc:
        raise TargetRefused("bad_url", f"not a URL: {exc}") from None
    if parts.scheme not in _SCHEMES:
        raise TargetRefused("bad_url", "the URL must be http:// or https://")
    if not parts.hostname:
        raise TargetRefused("bad_url", "the URL has no host")
    if parts.username or parts.password:
        raise TargetRefused("bad_url", "put no credentials in the URL; verify the signature instead")
    return parts.scheme, parts.hostname, port or _DEFAULT_PORTS[parts.scheme]


def _literal(host: str) -> ipaddress.IPv4Address | ipaddress.IPv6Address | None:
    try:
        return ipaddress.ip_address(host.split("%")[0])
    except ValueError:
        return None


def resolve_target(url: str, *, allow_private: bool) -> ResolvedTarget:
    """Resolve the URL's host now and check every address it has."""
    scheme, host, port = check_url(url)
    literal = _literal(host)
    if literal is not None and not allow_private:
        why = refusal(literal)
        if why is not None:  # the client wrote this address: naming its class tells them nothing new
            raise TargetRefused(NOT_ALLOWED, f"{literal} is not a public address ({why})")
    try:
        infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    except (OSError, UnicodeError) as exc:
        raise TargetRefused(NOT_ALLOWED, _NAME_REFUSED, f"{host} does not resolve: {exc}") from None
    addresses = [ipaddress.ip_address(str(info[4][0]).split("%")[0]) for info in infos]
    if not addresses:
        raise TargetRefused(NOT_ALLOWED, _NAME_REFUSED, f"{host} has no address")
    if not allow_private:
        barred = [f"{a} ({why})" for a in addresses if (why := refusal(a)) is not None]
        if barred:
            raise TargetRefused(NOT_ALLOWED, _NAME_REFUSED, f"{host} resolves to {', '.join(barred)}")
    return ResolvedTarget(url=url, scheme=scheme, host=host, port=port, address=str(addresses[0]))
