"""The bare endpoint the API benchmark compares against: same stack, no work.

``create_app()`` is a Flask app served by gunicorn exactly as ``ohmtally
serve`` serves ours (sync workers, same count), whose one route ``POST
/bare/<bytes>`` reads the request body and returns a fixed JSON document of
that many bytes (the size of the real answer it stands for). Also answers
GET, for the readiness probe. Kept in the bench package, not in the product:
nothing in production can switch it on.
"""

from __future__ import annotations

import functools
import json

from flask import Flask, Response, request

__all__ = ["create_app", "document"]


@functools.lru_cache(maxsize=64)
def document(size: int) -> bytes:
    """A JSON object of exactly ``size`` bytes (at least 16)."""
    head = b'{"padding":"'
    tail = b'"}'
    body = head + b"x" * max(0, size - len(head) - len(tail)) + tail
    json.loads(body)  # it is a real JSON document
    return body


def create_app() -> Flask:
    app = Flask("ohmtally_bench_bare")

    @app.route("/bare/<int:size>", methods=["GET", "POST"])
    def bare(size: int) -> Response:
        request.get_data()
        return Response(document(min(size, 64 * 2**20)), status=200, content_type="application/json")

    return app
