"""Where a webhook may go: IPv4 hidden inside IPv6 is judged as IPv4, and refusals reveal no DNS answer.

External references (the addresses are the RFCs' own examples or built by their rules):
- RFC 3056 §2 (6to4): 2002:V4ADDR::/48, the IPv4 address in bits 16–47.
- RFC 4380 §4 (Teredo): server IPv4 in bits 32–63, client IPv4 bit-inverted in the last 32 bits.
  The much-quoted example 2001:0:4136:e378:8000:63bf:3fff:fdd2 (server 65.54.227.120, client
  192.0.2.45) is from memory; the standard library's own Teredo decoding confirms it below.
- RFC 6052 §2.4 (NAT64 well-known prefix): 64:ff9b::192.0.2.33 carries 192.0.2.33 (the RFC's
  text-representation example, from memory; it follows from the /96 rule either way).
- RFC 8215: 64:ff9b:1::/48 is for local use.
- RFC 4291 §2.5.5: IPv4-mapped ::ffff:a.b.c.d and IPv4-compatible ::a.b.c.d.
- RFC 1122, 1918, 3927, 6598, 5737 (documentation ranges): the IPv4 classes refused.
Each embedding is also checked against the standard library's own decoding of it
(ipaddress' sixtofour / teredo / ipv4_mapped), where it has one.
"""

from __future__ import annotations

import ipaddress

import pytest
from flask.testing import FlaskClient

from api.webhooks.addresses import refusal
from api.webhooks.targets import TargetRefused, resolve_target


@pytest.mark.parametrize("address, inside, kind", [
    ("2002:7f00:1::1", "127.0.0.1", "6to4"),                        # the loopback example
    ("2002:a9fe:a9fe::1", "169.254.169.254", "6to4"),               # link-local: cloud metadata
    ("2002:0a00:0001::1", "10.0.0.1", "6to4"),                      # RFC 1918
    ("2002:6440:0001::1", "100.64.0.1", "6to4"),                    # RFC 6598 shared space
    ("2001:0:4136:e378:8000:63bf:3fff:fdd2", "192.0.2.45", "Teredo"),  # documentation client
    ("2001:0:7f00:1:8000:63bf:f7f7:f7f7", "127.0.0.1", "Teredo"),  # a loopback Teredo server
    ("64:ff9b::7f00:1", "127.0.0.1", "NAT64"),
    ("64:ff9b::c000:221", "192.0.2.33", "NAT64"),                   # RFC 6052's example
    ("::ffff:10.1.2.3", "10.1.2.3", "IPv4-mapped"),
    ("::169.254.0.1", "169.254.0.1", "IPv4-compatible"),
])
def test_an_ipv4_inside_ipv6_is_judged_as_that_ipv4(address: str, inside: str, kind: str) -> None:
    """A 6to4, Teredo, NAT64, mapped or compatible address carrying a non-public IPv4 is refused, and the
    refusal names the embedding; the IPv4 address alone is refused too."""
    why = refusal(ipaddress.ip_address(address))
    assert why is not None and why.startswith(f"{kind} embedding")
    assert refusal(ipaddress.ip_address(inside)) is not None


def test_our_decoding_agrees_with_the_standard_library() -> None:
    """Where ipaddress decodes an embedding itself, the IPv4 it finds is the one this test names."""
    assert ipaddress.IPv6Address("2002:7f00:1::1").sixtofour == ipaddress.IPv4Address("127.0.0.1")
    assert ipaddress.IPv6Address("2002:a9fe:a9fe::1").sixtofour == ipaddress.IPv4Address("169.254.169.254")
    teredo = ipaddress.IPv6Address("2001:0:4136:e378:8000:63bf:3fff:fdd2").teredo
    assert teredo == (ipaddress.IPv4Address("65.54.227.120"), ipaddress.IPv4Address("192.0.2.45"))


@pytest.mark.parametrize("address", [
    "2002:808:808::1",                         # 6to4 of 8.8.8.8
    "64:ff9b::808:808",                        # NAT64 of 8.8.8.8: an IPv6-only host reaching IPv4
    "::ffff:1.1.1.1",
    "2001:0:4136:e378:8000:63bf:f7f7:f7f7",    # Teredo: public server, client 8.8.8.8
    "2606:4700:4700::1111",                    # plain global unicast
    "8.8.8.8",
])
def test_public_embeddings_are_allowed(address: str) -> None:
    """An embedding of a public IPv4 address is as allowed as that address."""
    assert refusal(ipaddress.ip_address(address)) is None


@pytest.mark.parametrize("address", ["64:ff9b:1::808:808", "64:ff9b:1:ff::1"])
def test_the_nat64_local_use_prefix_is_refused_whole(address: str) -> None:
    """RFC 8215's local-use prefix is refused whatever it seems to carry."""
    assert refusal(ipaddress.ip_address(address)) == "NAT64 local-use prefix"


@pytest.mark.parametrize("url", ["http://[2002:7f00:1::1]/hook", "http://[2002:a9fe:a9fe::1]/latest",
                                 "https://[64:ff9b::a00:1]/hook", "http://[::ffff:127.0.0.1]:8080/",
                                 "http://[2001:0:4136:e378:8000:63bf:3fff:fdd2]/"])
def test_the_api_refuses_embedded_private_targets(client: FlaskClient, url: str) -> None:
    """POST /v1/webhooks with such a literal is a 422 target_not_allowed pointing at /url."""
    response = client.post("/v1/webhooks", json={"url": url, "events": ["job.created"]})
    assert response.status_code == 422
    errors = response.get_json()["errors"]
    assert [(e["pointer"], e["code"]) for e in errors] == [("/url", "target_not_allowed")]


def test_a_public_6to4_literal_is_accepted(client: FlaskClient) -> None:
    """6to4 of a public address passes at subscription time (nothing is sent then)."""
    response = client.post("/v1/webhooks", json={"url": "http://[2002:808:808::1]/hook",
                                                 "events": ["job.created"]})
    assert response.status_code == 201, response.get_json()


def test_refusals_of_names_reveal_no_resolution(client: FlaskClient) -> None:
    """A name resolving to loopback and a name that does not resolve get the same answer, which names
    neither an address nor whether the name resolved."""
    answers = []
    for host in ("localhost", "no-such-host.invalid"):  # RFC 6761: .invalid never resolves
        response = client.post("/v1/webhooks", json={"url": f"http://{host}:8000/hook",
                                                     "events": ["job.created"]})
        assert response.status_code == 422
        body = response.get_json()
        text = response.get_data(as_text=True)
        for leak in ("127.0.0.1", "::1", "resolves to", "does not resolve:", "Name or service"):
            assert leak not in text
        answers.append((body["code"], body["detail"], body["errors"]))
    assert answers[0] == answers[1] and answers[0][0] == "target_not_allowed"


def test_the_log_keeps_the_detail_the_client_does_not_get() -> None:
    """The operator's detail names what the name resolved to; the client's reason does not."""
    with pytest.raises(TargetRefused) as refused:
        resolve_target("http://localhost:9/x", allow_private=False)
    assert "resolves to" in refused.value.detail and "loopback" in refused.value.detail
    assert "127.0.0.1" not in refused.value.reason and "::1" not in refused.value.reason
