"""What happens to every request before and after its view: the request log, API keys and the
request's organisation, rate limits, Idempotency-Key replay, conditional requests.

``api.app.create_app`` installs them in that order (:func:`install`): the log first, so
every answer carries a request id; the key check before the rate limit, which counts per
key; idempotency last, because a key's reservation belongs to an organisation.
"""

from __future__ import annotations

__all__: list[str] = []
