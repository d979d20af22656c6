"""The bare endpoint the API benchmark compares against: same stack, no work.

``create_app()`` is a Flask app served by gunicorn exactly as ``ohmtally
serve`` serves ours (sync workers, same count), whose one route ``POST /bare``
reads the request body and returns a fixed JSON document of
``OHMTALLY_BENCH_BARE_BYTES`` bytes (the size of the real response it stands
for). Kept in the bench package, not in the product: nothing in production
can switch it on.
"""

from __future__ import annotations

import json
import os

from flask import Flask, Response, request

__all__ = ["create_app", "document"]


def document(size: int) -> bytes:
    """A JSON object of exactly ``size`` bytes (at least 16)."""
    head = b'{"padding":"'
    tail = b'"}'
    return head + b"x" * max(0, size - len(head) - len(tail)) + tail


def create_app() -> Flask:
    app = Flask("ohmtally_bench_bare")
    body = document(int(os.environ.get("OHMTALLY_BENCH_BARE_BYTES", "1024")))
    json.loads(body)  # it is a real JSON document

    @app.post("/bare")
    def bare() -> Response:
        request.get_data()
        return Response(body, status=200, content_type="application/json")

    return app
