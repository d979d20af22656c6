"""The OpenAPI document completed: what flask-smorest cannot infer from the views, stated by rule.

Invariants:
- :class:`DocumentCompletion` (an apispec plugin, installed by :func:`api.app.create_app`)
  gives every operation an ``operationId`` (:mod:`.operations`), its ``security`` and scope
  as the key check answers them (:mod:`.security`), the headers it reads (:mod:`.headers`),
  the constraints the server enforces beyond types (:mod:`.constraints`, :mod:`.formats`)
  and recorded examples (:mod:`.examples`, files in ``examples/``).
- Nothing here changes what the server does; every rule is read off the code that enforces
  it, and tests/api/test_openapi_*.py check each against the running server.
- A new route needs nothing here: it is completed as it is registered. Its example is
  recorded by adding a step to tests/api/test_openapi_examples.py and running that test
  with ``OHMTALLY_RECORD_EXAMPLES=1`` (see api/openapi/README.md).
"""

from __future__ import annotations

from api.openapi.plugin import DocumentCompletion

__all__ = ["DocumentCompletion"]
