"""Webhooks: subscriptions, a durable outbox, signed deliveries with retries (issue 8).

Modules: ``models`` (tables), ``targets`` (which URLs may be called), ``signing``
(the signature header), ``outbox`` (events written with the change), ``delivery``
(the worker). Nothing is imported here, so ``api.db.models`` can load ``models``.
"""

__all__: list[str] = []
