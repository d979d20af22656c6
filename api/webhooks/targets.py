"""Which URLs a webhook may call: http(s) only, and no private network unless allowed.

Invariants:
- A target is checked when a subscription is made and again before every
  send, on the addresses DNS gives *at that moment*; a name that resolves to
  any loopback, private (RFC 1918, RFC 4193), link-local (RFC 3927, RFC 4291),
  carrier-grade NAT (RFC 6598), multicast, reserved or unspecified address is
  refused while ``OHMTALLY_WEBHOOK_ALLOW_PRIVATE`` is off (the default), so a
  subscriber cannot make the server call its own network (SSRF).
- :func:`resolve_target` returns the checked address; the sender connects to
  that address, not to a second look-up, so a name cannot re-point between
  check and send (DNS rebinding).
- Failures are :class:`TargetRefused` values with a stable ``code``.
"""

from __future__ import annotations

import ipaddress
import socket
from dataclasses import dataclass
from urllib.parse import urlsplit

__all__ = ["ResolvedTarget", "TargetRefused", "check_url", "resolve_target"]

_SCHEMES = ("http", "https")
_DEFAULT_PORTS = {"http": 80, "https": 443}


class TargetRefused(ValueError):
    """A webhook URL that may not be called; ``code`` is stable for problem bodies."""

    def __init__(self, code: str, reason: str) -> None:
        super().__init__(reason)
        self.code = code
        self.reason = reason


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
        netloc = f"{shown}:{self.port}"
        return parts._replace(netloc=netloc).geturl()


def _is_public(address: ipaddress.IPv4Address | ipaddress.IPv6Address) -> bool:
    if isinstance(address, ipaddress.IPv6Address) and address.ipv4_mapped is not None:
        address = address.ipv4_mapped
    return not (address.is_private or address.is_loopback or address.is_link_local
                or address.is_multicast or address.is_reserved or address.is_unspecified
                or address in ipaddress.ip_network("100.64.0.0/10"))


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


def resolve_target(url: str, *, allow_private: bool) -> ResolvedTarget:
    """Resolve the URL's host now and check every address it has."""
    scheme, host, port = check_url(url)
    try:
        infos = socket.getaddrinfo(host, port, type=socket.SOCK_STREAM)
    except (socket.gaierror, UnicodeError) as exc:
        raise TargetRefused("unresolvable_host", f"{host} does not resolve: {exc}") from None
    addresses = [ipaddress.ip_address(str(info[4][0]).split("%")[0]) for info in infos]
    if not addresses:
        raise TargetRefused("unresolvable_host", f"{host} has no address")
    if not allow_private:
        barred = [str(a) for a in addresses if not _is_public(a)]
        if barred:
            raise TargetRefused("private_address",
                                f"{host} resolves to {', '.join(barred)}, a loopback, private or "
                                "link-local address (OHMTALLY_WEBHOOK_ALLOW_PRIVATE is off)")
    return ResolvedTarget(url=url, scheme=scheme, host=host, port=port, address=str(addresses[0]))
