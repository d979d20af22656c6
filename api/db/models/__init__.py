"""Every table, on one declarative base: jobs and their records, API keys, webhooks.

Importing this package registers every table in ``Base.metadata`` (Alembic's
``env.py`` and the models-match-migrations test rely on that). Each module
imports :mod:`.base`, and those whose rows belong to a job or an organisation
import :mod:`.jobs` for its key type; ``jobs`` imports only ``base``, so there is
no cycle between them.
"""

from __future__ import annotations

from .auth import SCOPES, ApiKey, IdempotencyRecord
from .base import Base, UtcDateTime, utcnow
from .jobs import Circuit, FieldHistory, Job, Organisation, Upload
from .site import BOARD_SCOPE, INSTALLATION_SCOPE, FactHistory, SiteFacts
from .webhooks import DELIVERY_STATUSES, EVENT_TYPES, WebhookDelivery, WebhookEvent, WebhookSubscription

__all__ = [
    "BOARD_SCOPE",
    "DELIVERY_STATUSES",
    "EVENT_TYPES",
    "INSTALLATION_SCOPE",
    "SCOPES",
    "ApiKey",
    "Base",
    "Circuit",
    "FactHistory",
    "FieldHistory",
    "IdempotencyRecord",
    "Job",
    "Organisation",
    "SiteFacts",
    "Upload",
    "UtcDateTime",
    "WebhookDelivery",
    "WebhookEvent",
    "WebhookSubscription",
    "utcnow",
]
