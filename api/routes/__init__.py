"""The /v1 blueprints, one per resource, in the order the OpenAPI document lists them."""

from __future__ import annotations

from flask_smorest import Blueprint

from api.routes.catalogue import blp as catalogue
from api.routes.changes import blp as changes
from api.routes.docs import blp as docs
from api.routes.jobs import blp as jobs
from api.routes.operations import blp as operations
from api.routes.readings import blp as readings
from api.routes.site import blp as site
from api.routes.sync import blp as sync
from api.routes.verify import blp as verify
from api.routes.webhooks import blp as webhooks

__all__ = ["BLUEPRINTS"]

BLUEPRINTS: tuple[Blueprint, ...] = (catalogue, operations, verify, jobs, site, sync, readings, changes,
                                      webhooks, docs)
