"""``/v1/webhooks``: an organisation's subscriptions and the deliveries made to each.

Invariants:
- Every subscription belongs to the request's organisation (the API key's;
  ``local`` with auth off); another organisation's is a 404 like a missing one.
- Creating or deleting a subscription needs an ``admin`` key (it sends the
  organisation's data to a URL); reading them and their deliveries ``read``.
- The secret is returned once, in the 201 of the POST, never again.
- A URL is checked against the target policy (``api.webhooks.targets``) when
  the subscription is made; it is checked again at every send.
"""

from __future__ import annotations

from typing import Any

from flask import Response
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE
from sqlalchemy import delete, select
from sqlalchemy.orm import Session

from api.db.models import WebhookDelivery, WebhookEvent, WebhookSubscription
from api.db.repository import decode_cursor, encode_cursor
from api.db.session import get_session
from api.errors import ApiError
from api.http.auth import require_scope, tenant
from api.routes.common import json_body, json_body_doc, settings
from api.schemas.webhooks import (
    DeliveryListSchema,
    DeliveryQuerySchema,
    SubscriptionCreatedSchema,
    SubscriptionCreateSchema,
    SubscriptionListSchema,
    SubscriptionSchema,
)
from api.webhooks.signing import new_secret
from api.webhooks.targets import TargetRefused, resolve_target

__all__ = ["blp"]

blp = Blueprint("webhooks", __name__, url_prefix="/v1", description="Webhook subscriptions and deliveries")


_admin = require_scope("admin")  # making or removing a subscription: it sends data off-site


def _subscription_dict(row: WebhookSubscription) -> dict[str, Any]:
    return {"id": row.id, "url": row.url, "events": list(row.events), "description": row.description,
            "created_at": row.created_at, "deliveries_href": f"/v1/webhooks/{row.id}/deliveries"}


def _get(session: Session, subscription_id: int) -> WebhookSubscription:
    row = session.get(WebhookSubscription, subscription_id)
    if row is None or row.organisation_id != tenant():
        raise ApiError(404, "webhook_not_found", f"there is no webhook subscription {subscription_id}",
                       errors=[{"parameter": "webhook_id", "code": "webhook_not_found",
                                "reason": f"no subscription with id {subscription_id}"}])
    return row


@blp.route("/webhooks")
class Webhooks(MethodView):
    @blp.doc(requestBody=json_body_doc(SubscriptionCreateSchema))
    @blp.response(201, SubscriptionCreatedSchema)
    @_admin
    def post(self) -> Any:
        """Subscribe a URL to events; the answer shows the signing secret, once."""
        data = json_body(SubscriptionCreateSchema())
        try:
            resolve_target(data["url"], allow_private=settings().webhook_allow_private)
        except TargetRefused as refused:
            raise ApiError(422, refused.code, f"this URL may not receive webhooks: {refused.reason}",
                           errors=[{"pointer": "/url", "code": refused.code, "reason": refused.reason}]
                           ) from None
        session = get_session()
        row = WebhookSubscription(organisation_id=tenant(), url=data["url"],
                                  events=sorted(set(data["events"])),
                                  secret=data.get("secret") or new_secret(),
                                  description=data.get("description"))
        session.add(row)
        session.flush()
        return {**_subscription_dict(row), "secret": row.secret}, 201, {"Location": f"/v1/webhooks/{row.id}"}

    @blp.response(200, SubscriptionListSchema)
    def get(self) -> Any:
        """The organisation's subscriptions (without their secrets)."""
        session = get_session()
        query = (select(WebhookSubscription)
                 .where(WebhookSubscription.organisation_id == tenant())
                 .order_by(WebhookSubscription.id))
        return {"items": [_subscription_dict(r) for r in session.scalars(query)]}


@blp.route("/webhooks/<int:webhook_id>")
class Webhook(MethodView):
    @blp.response(200, SubscriptionSchema)
    def get(self, webhook_id: int) -> Any:
        """One subscription (without its secret)."""
        return _subscription_dict(_get(get_session(), webhook_id))

    @blp.response(204)
    @_admin
    def delete(self, webhook_id: int) -> Any:
        """Delete the subscription and its deliveries; nothing more is sent to it."""
        session = get_session()
        row = _get(session, webhook_id)
        session.execute(delete(WebhookDelivery).where(WebhookDelivery.subscription_id == row.id))
        session.delete(row)
        return Response(status=204)


@blp.route("/webhooks/<int:webhook_id>/deliveries")
class WebhookDeliveries(MethodView):
    @blp.arguments(DeliveryQuerySchema, location="query", as_kwargs=True, unknown=RAISE)
    @blp.response(200, DeliveryListSchema)
    def get(self, webhook_id: int, **query: Any) -> Any:
        """Deliveries to this subscription, oldest first: attempts, status, last error."""
        session = get_session()
        row = _get(session, webhook_id)
        limit = query.get("limit") or settings().page_limit
        select_rows = (select(WebhookDelivery, WebhookEvent)
                       .join(WebhookEvent, WebhookEvent.id == WebhookDelivery.event_pk)
                       .where(WebhookDelivery.subscription_id == row.id)
                       .order_by(WebhookDelivery.id).limit(limit + 1))
        if query.get("cursor"):
            select_rows = select_rows.where(WebhookDelivery.id > decode_cursor(query["cursor"]))
        if query.get("status"):
            select_rows = select_rows.where(WebhookDelivery.status == query["status"])
        found = list(session.execute(select_rows))
        page = found[:limit]
        cursor = encode_cursor(page[-1][0].id) if len(found) > limit and page else None
        return {"items": [d.as_dict(e) for d, e in page], "next_cursor": cursor, "limit": limit}
