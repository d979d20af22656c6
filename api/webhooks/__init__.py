"""Webhooks: subscriptions, a durable outbox, deliveries signed by the Standard Webhooks spec, retries.

Modules: ``signing`` (the three ``webhook-*`` headers, ``whsec_`` secrets and their
strength), ``server_key`` (the ``OHMTALLY_ENCRYPTION_KEY`` setting), ``sealing``
(secrets encrypted at rest), ``secret_store`` (a subscription's secrets and their
rotation), ``clock`` (the database's time), ``addresses`` and ``targets`` (which
URLs may be called), ``outbox`` (events written with the change), ``delivery``
(the worker) and ``runner`` (where it runs). The tables are in
``api.db.models.webhooks``; how a receiver verifies a delivery is in README.md
beside this file. Nothing is imported here, so importing one module loads no other.
"""

__all__: list[str] = []
