"""The /v1 blueprints, one per resource, in the order the OpenAPI document lists them."""

from __future__ import annotations

from flask_smorest import Blueprint

from .catalogue import blp as catalogue
from .jobs import blp as jobs
from .readings import blp as readings
from .sync import blp as sync
from .verify import blp as verify
from .webhooks import blp as webhooks

__all__ = ["BLUEPRINTS"]

BLUEPRINTS: tuple[Blueprint, ...] = (catalogue, verify, jobs, sync, readings, webhooks)
