"""The signer against the Standard Webhooks reference: its published test vector and its library.

External references:
- The Standard Webhooks project's Python library test suite publishes a vector:
  secret ``whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw``, id ``msg_p5jXN8AQM9LWM0D4loKWxJek``,
  timestamp 1614265330 and payload ``{"test": 2432232314}`` sign to
  ``v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=``.
- The specification: several signatures are space-separated in one header, and a
  receiver accepts the message when any one matches (checked with ``standardwebhooks``).
"""

from __future__ import annotations

import base64
import os
import time

import pytest
from standardwebhooks.webhooks import Webhook, WebhookVerificationError

from api.webhooks.signing import (
    ID_HEADER,
    SIGNATURE_HEADER,
    TIMESTAMP_HEADER,
    WeakSecret,
    format_secret,
    new_secret,
    parse_secret,
    sign,
    signed_headers,
)

VECTOR_SECRET = "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw"


def test_the_published_vector() -> None:
    """Our sign() gives the reference library's published signature for its published inputs."""
    key = base64.b64decode(VECTOR_SECRET[6:])
    assert sign(key, "msg_p5jXN8AQM9LWM0D4loKWxJek", 1614265330, b'{"test": 2432232314}') == \
        "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE="


def test_several_secrets_give_one_header_any_of_which_verifies() -> None:
    """Headers signed with two keys verify with either key's whsec_ form and with neither third key;
    a changed timestamp or body fails."""
    keys = [new_secret(), new_secret()]
    body = '{"id":"e1","type":"job.created","data":{"site":"Invented Röad"}}'.encode()
    now = int(time.time())
    headers = signed_headers(keys, "e1", now, body)
    assert headers[ID_HEADER] == "e1" and headers[TIMESTAMP_HEADER] == str(now)
    assert [s[:3] for s in headers[SIGNATURE_HEADER].split(" ")] == ["v1,", "v1,"]
    for key in keys:
        assert Webhook(format_secret(key)).verify(body, headers)["data"]["site"] == "Invented Röad"
    for bad in ({**headers, TIMESTAMP_HEADER: str(now + 1)}, headers):
        with pytest.raises(WebhookVerificationError):
            Webhook(format_secret(new_secret())).verify(body, bad)
    with pytest.raises(WebhookVerificationError):
        Webhook(format_secret(keys[0])).verify(body + b" ", headers)


def test_secret_text_round_trips() -> None:
    """whsec_ text of random bytes parses back to those bytes, padded or not; the reference library reads
    the same bytes from it."""
    raw = os.urandom(32)
    text = format_secret(raw)
    assert parse_secret(text) == raw == parse_secret(text.rstrip("="))
    assert Webhook(text)._whsecret == raw  # the library's own decoding of our format


@pytest.mark.parametrize("text, code", [("MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw", "bad_secret"),
                                        ("whsec_" + "-_" * 20, "bad_secret"),
                                        (format_secret(b"\x00" * 24), "weak_secret")])
def test_parse_secret_refuses(text: str, code: str) -> None:
    """No prefix, URL-safe instead of standard base64, or 24 zero bytes are refused with a code."""
    with pytest.raises(WeakSecret) as refused:
        parse_secret(text)
    assert refused.value.code == code
