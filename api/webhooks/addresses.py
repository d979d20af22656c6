"""Which IP addresses a webhook may be sent to: public ones, also when an IPv4 hides inside an IPv6.

Invariants:
- :func:`refusal` answers ``None`` for a public address, else a short name of
  its class (for the operator's log and the tests; clients get no more than
  "not allowed", see :mod:`api.webhooks.targets`).
- IPv4: refused when unspecified, loopback (RFC 1122), link-local (RFC 3927),
  shared / carrier-grade NAT 100.64.0.0/10 (RFC 6598), multicast, private or
  special-purpose (RFC 1918 and the IANA special-purpose registry, RFC 6890,
  as the standard library's ``ipaddress`` lists them), reserved, or not global.
- An IPv6 address that carries an IPv4 address is judged by that IPv4
  address, whatever its own prefix would say:
  IPv4-mapped ``::ffff:0:0/96`` and IPv4-compatible ``::/96`` (RFC 4291
  §2.5.5), 6to4 ``2002::/16`` (RFC 3056: bits 16–47), Teredo ``2001::/32``
  (RFC 4380: the server in bits 32–63 and the client, bit-inverted, in the
  last 32 bits; both must be public) and the NAT64 well-known prefix
  ``64:ff9b::/96`` (RFC 6052: the last 32 bits). So ``2002:7f00:1::1``
  (127.0.0.1) and ``2002:a9fe:a9fe::1`` (169.254.169.254) are refused, and
  ``64:ff9b::808:808`` (8.8.8.8) is allowed, as 8.8.8.8 itself is.
- The NAT64 local-use prefix ``64:ff9b:1::/48`` (RFC 8215) is refused whole:
  where its IPv4 address sits depends on the prefix length its operator chose.
- Other IPv6: refused when unspecified, loopback, link-local, site-local,
  multicast, unique-local (RFC 4193), private or special-purpose, reserved,
  or not global.
"""

from __future__ import annotations

from ipaddress import IPv4Address, IPv6Address, ip_network

__all__ = ["refusal"]

_SHARED = ip_network("100.64.0.0/10")  # RFC 6598
_COMPATIBLE = ip_network("::/96")  # RFC 4291 §2.5.5.1 (deprecated)
_NAT64_WELL_KNOWN = ip_network("64:ff9b::/96")  # RFC 6052 §2.1
_NAT64_LOCAL = ip_network("64:ff9b:1::/48")  # RFC 8215


def _ipv4_refusal(address: IPv4Address) -> str | None:
    checks = (("unspecified", address.is_unspecified), ("loopback", address.is_loopback),
              ("link-local", address.is_link_local), ("shared (carrier-grade NAT)", address in _SHARED),
              ("multicast", address.is_multicast), ("private or special-purpose", address.is_private),
              ("reserved", address.is_reserved), ("not global", not address.is_global))
    return next((name for name, hit in checks if hit), None)


def _embedded(address: IPv6Address) -> tuple[str, list[IPv4Address]] | None:
    """The IPv4 addresses an IPv6 address carries, with the name of the embedding."""
    if address.ipv4_mapped is not None:
        return "IPv4-mapped", [address.ipv4_mapped]
    if address in _COMPATIBLE and int(address) > 1:  # :: and ::1 are themselves, not embeddings
        return "IPv4-compatible", [IPv4Address(int(address) & 0xFFFFFFFF)]
    if address.sixtofour is not None:
        return "6to4", [address.sixtofour]
    if address.teredo is not None:
        server, client = address.teredo
        return "Teredo", [server, client]
    if address in _NAT64_WELL_KNOWN:
        return "NAT64", [IPv4Address(int(address) & 0xFFFFFFFF)]
    return None


def _ipv6_refusal(address: IPv6Address) -> str | None:
    checks = (("unspecified", address.is_unspecified), ("loopback", address.is_loopback),
              ("link-local", address.is_link_local), ("site-local", address.is_site_local),
              ("multicast", address.is_multicast), ("private or special-purpose", address.is_private),
              ("reserved", address.is_reserved), ("not global", not address.is_global))
    return next((name for name, hit in checks if hit), None)


def refusal(address: IPv4Address | IPv6Address) -> str | None:
    """``None`` if a webhook may go to ``address``; else why not, in a few words."""
    if isinstance(address, IPv4Address):
        return _ipv4_refusal(address)
    if address in _NAT64_LOCAL:
        return "NAT64 local-use prefix"
    embedded = _embedded(address)
    if embedded is not None:
        kind, inner = embedded
        for ipv4 in inner:
            found = _ipv4_refusal(ipv4)
            if found is not None:
                return f"{kind} embedding of a {found} IPv4 address"
        return None
    return _ipv6_refusal(address)
