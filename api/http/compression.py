"""Compressed answers (flask-compress): zstd, brotli or gzip, as the client's Accept-Encoding asks.

Invariants:
- Only 2xx answers of a text type are compressed, and only from
  :data:`MIN_SIZE` bytes: a problem document (4xx/5xx) never is, nor a body small
  enough to travel in one TCP segment anyway. Every compressible answer says
  ``Vary: Accept-Encoding``.
- Compression runs after every other ``after_request`` step (:func:`init_app` is
  called before the others install theirs): an Idempotency-Key's stored answer is
  the uncompressed one, and a replay is compressed like any answer.
- ETags stay correct (RFC 9110 §8.8.3: a content coding is part of the
  representation): a compressed answer's strong ETag ``"x"`` becomes ``"x:zstd"``
  (``:br``, ``:gzip``). A client sending that back in ``If-None-Match`` still gets
  the view's cheap 304 (``GET …/verdicts`` answers it from the job row alone):
  :func:`_also_plain_tags` adds ``"x"`` beside ``"x:zstd"`` before the view runs,
  and the 304 names the tag the client holds.

The levels were chosen by measurement (``examples/deploy/compression_levels.py``)
on ``POST /v1/verify`` answers of invented jobs: 48 circuits = 296,134 bytes
(15 ms of CPU to compute), 500 circuits = 3,022,993 bytes (178 ms). CPU per
compression is a median of process time on this 2-core host under a load of ~2:

==========  ==================  ===================  =====================
algorithm   level               48 circuits          500 circuits
==========  ==================  ===================  =====================
zstd        1 (chosen)          16,947 B, 0.13 ms    126,970 B, 1.9 ms
zstd        3 (library default) 17,684 B, 0.17 ms    128,178 B, 2.2 ms
br          1                   20,394 B, 0.22 ms    177,004 B, 2.9 ms
br          4 (chosen)          17,060 B, 0.95 ms    114,251 B, 10.8–16.7 ms
br          5                   14,389 B, 1.5 ms     97,197 B, 18.9 ms
gzip        1                   32,876 B, 0.9 ms     306,197 B, 9.1 ms
gzip        4                   22,960 B, 1.3 ms     206,111 B, 12.9 ms
gzip        5 (chosen)          20,613 B, 1.5 ms     182,627 B, 14.8 ms
gzip        6 (library default) 19,415 B, 1.9 ms     170,491 B, 18.4 ms
gzip        9                   18,485 B, 2.6 ms     160,338 B, 27.3 ms
==========  ==================  ===================  =====================

zstd 1 is smaller than gzip 9 for a twentieth of gzip 6's CPU, and zstd's default
(3) buys nothing over it, so zstd comes first. gzip 5 minimises CPU plus transfer
time at 50 Mbit/s (500 circuits: 44.0 ms against 45.6 ms at 6 and 45.9 ms at 4;
48 circuits: 4.8 ms against 5.0 ms), and stays near a tenth of the request's own
CPU. brotli 1–4 tie on that sum within the timing noise; 4 (the library's
default) is the smallest of them at under a tenth of the request's CPU. deflate
is not offered: clients disagree on whether it means zlib or raw deflate.
"""

from __future__ import annotations

from flask import Flask, Response, g, request
from flask_compress import Compress

__all__ = ["ALGORITHMS", "MEDIA_TYPES", "MIN_SIZE", "init_app"]

ALGORITHMS = ("zstd", "br", "gzip")  # preference when the client rates them equally
MIN_SIZE = 1400  # bytes: a body below one TCP segment (MSS 1460) gains no round trip compressed
MEDIA_TYPES = (
    "application/json", "application/xml", "application/x-ndjson",
    "text/csv", "text/html", "text/plain", "text/css", "application/javascript", "text/javascript",
)
_LEVELS = {"COMPRESS_ZSTD_LEVEL": 1, "COMPRESS_BR_LEVEL": 4, "COMPRESS_LEVEL": 5}
_HELD = "ohmtally_if_none_match"  # g: the coded tags the client sent, plain tag → coded tag


def _strip_coding(tag: str) -> tuple[str, str] | None:
    """``"x:zstd"`` → (``"x"``, ``"x:zstd"``); ``W/"x:br"`` keeps its ``W/``; else ``None``."""
    weak = tag.startswith("W/")
    body = tag[2:] if weak else tag
    if len(body) < 2 or not (body.startswith('"') and body.endswith('"')):
        return None
    inner, _, coding = body[1:-1].rpartition(":")
    if not inner or coding not in ALGORITHMS:
        return None
    return ("W/" if weak else "") + f'"{inner}"', tag


def _also_plain_tags() -> None:
    """Before the view: ``If-None-Match: "x:gzip"`` also names ``"x"`` (the view's own tag)."""
    header = request.environ.get("HTTP_IF_NONE_MATCH")
    if not header:
        return
    held: dict[str, str] = {}
    for candidate in header.split(","):
        found = _strip_coding(candidate.strip())
        if found is not None:
            held[found[0].removeprefix("W/")] = found[1]
    if held:
        g.setdefault(_HELD, {}).update(held)
        request.environ["HTTP_IF_NONE_MATCH"] = ", ".join([header, *held])


def _name_the_held_tag(response: Response) -> Response:
    """After compression: a 304 names the coded tag the client holds, as its 200 did."""
    held: dict[str, str] = g.get(_HELD) or {}
    if response.status_code == 304 and held:
        tag = response.headers.get("ETag", "")
        coded = held.get(tag.removeprefix("W/"))
        if coded is not None:
            response.headers["ETag"] = coded
    return response


def init_app(app: Flask) -> None:
    """Install compression; call it before any other ``after_request`` step is installed."""
    app.config.setdefault("COMPRESS_ALGORITHM", list(ALGORITHMS))
    app.config.setdefault("COMPRESS_MIN_SIZE", MIN_SIZE)
    app.config.setdefault("COMPRESS_MIMETYPES", list(MEDIA_TYPES))
    for key, level in _LEVELS.items():
        app.config.setdefault(key, level)
    app.before_request(_also_plain_tags)
    app.after_request(_name_the_held_tag)  # installed first of the two: runs after compression
    Compress(app)
