"""``/v1/webhooks``: an organisation's subscriptions, their signing secrets and the deliveries made.

Invariants:
- Every subscription belongs to the request's organisation (the API key's;
  ``local`` with auth off); another organisation's is a 404 like a missing one.
- Creating or deleting a subscription, or rotating its secret, needs an
  ``admin`` key (it sends the organisation's data to a URL, or decides who
  can prove it came from us); reading them and their deliveries ``read``.
- A secret is shown once, in the answer that made it (the 201 of the POST,
  the 200 of a rotation), as ``whsec_…``; it is stored only sealed with the
  server key (:mod:`api.webhooks.sealing`). Without a server key (auth on,
  ``OHMTALLY_ENCRYPTION_KEY`` unset) making or rotating one is a 503.
- A rotation keeps the earlier secrets signing for the overlap and leaves
  every delivery where it is (:mod:`api.webhooks.secret_store`).
- A URL is checked against the target policy (``api.webhooks.targets``) when
  the subscription is made; it is checked again at every send. A refusal
  never says what a name resolved to.
- Times come from the database's clock (:mod:`api.webhooks.clock`).
"""

from __future__ import annotations

import math
from datetime import datetime
from typing import Any

from flask import Response, current_app, request
from flask.views import MethodView
from flask_smorest import Blueprint
from marshmallow import RAISE
from sqlalchemy import delete, select
from sqlalchemy.orm import Session

from api.db.models import WebhookDelivery, WebhookEvent, WebhookSubscription
from api.db.models.webhooks import WebhookSecret
from api.db.repository import decode_cursor, encode_cursor
from api.db.session import get_session
from api.errors import PROBLEM_MEDIA_TYPE, ApiError
from api.http.auth import require_scope, tenant
from api.routes.common import json_body, json_body_doc, settings
from api.schemas.errors import ProblemSchema
from api.schemas.webhooks import (
    DeliveryListSchema,
    DeliveryQuerySchema,
    SecretRotateSchema,
    SubscriptionCreatedSchema,
    SubscriptionCreateSchema,
    SubscriptionListSchema,
    SubscriptionSchema,
)
from api.webhooks.clock import database_now
from api.webhooks.sealing import SecretBox, ServerKeyFileError, box_for_app
from api.webhooks.secret_store import MAX_VALID_SECRETS, TooManySecrets, add_secret, rotate, valid_secrets
from api.webhooks.signing import WeakSecret, format_secret, new_secret, parse_secret
from api.webhooks.targets import TargetRefused, resolve_target

__all__ = ["blp"]

blp = Blueprint("webhooks", __name__, url_prefix="/v1", description="Webhook subscriptions and deliveries")


_admin = require_scope("admin")  # making, re-keying or removing a subscription
_PROBLEM = {"schema": ProblemSchema, "content_type": PROBLEM_MEDIA_TYPE}
_NO_KEY = ("no server key to encrypt secrets with (auth on and OHMTALLY_ENCRYPTION_KEY unset: "
           "secret_key_missing), or its key file is unusable (secret_key_unusable)")


def _box() -> SecretBox:
    try:
        box = box_for_app(current_app)
    except ServerKeyFileError as exc:
        current_app.extensions["ohmtally.logger"].error(f"webhook secrets: {exc}")
        raise ApiError(503, "secret_key_unusable", "the server's key for webhook secrets cannot be "
                       "used; the reason was logged for the operator") from None
    if box is None:
        raise ApiError(503, "secret_key_missing", "webhook secrets are encrypted at rest with "
                       "OHMTALLY_ENCRYPTION_KEY, which this server does not have: its operator must set it")
    return box


def _client_secret(data: dict[str, Any]) -> bytes:
    if "secret" not in data:
        return new_secret()
    try:
        return parse_secret(data["secret"])
    except WeakSecret as weak:
        raise ApiError(422, weak.code, f"this secret may not sign webhooks: {weak.reason}",
                       errors=[{"pointer": "/secret", "code": weak.code, "reason": weak.reason}]) from None


def _subscription_dict(row: WebhookSubscription, secrets: list[WebhookSecret]) -> dict[str, Any]:
    return {"id": row.id, "url": row.url, "events": list(row.events), "description": row.description,
            "created_at": row.created_at, "deliveries_href": f"/v1/webhooks/{row.id}/deliveries",
            "secrets": [{"created_at": s.created_at, "valid_until": s.expires_at} for s in secrets]}


def _shown(session: Session, rows: list[WebhookSubscription], now: datetime) -> list[dict[str, Any]]:
    secrets = valid_secrets(session, [r.id for r in rows], now)
    return [_subscription_dict(r, secrets[r.id]) for r in rows]


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
    @blp.alt_response(503, description=_NO_KEY, **_PROBLEM)
    @_admin
    def post(self) -> Any:
        """Subscribe a URL to events; the answer shows the signing secret (`whsec_…`), once."""
        data = json_body(SubscriptionCreateSchema())
        try:
            resolve_target(data["url"], allow_private=settings().webhook_allow_private)
        except TargetRefused as refused:
            raise ApiError(422, refused.code, f"this URL may not receive webhooks: {refused.reason}",
                           errors=[{"pointer": "/url", "code": refused.code, "reason": refused.reason}]
                           ) from None
        key = _client_secret(data)
        box = _box()
        session = get_session()
        now = database_now(session)
        row = WebhookSubscription(organisation_id=tenant(), url=data["url"],
                                  events=sorted(set(data["events"])),
                                  description=data.get("description"), created_at=now)
        session.add(row)
        session.flush()
        secret = add_secret(session, box, row.id, key, now)
        answer = {**_subscription_dict(row, [secret]), "secret": format_secret(key)}
        return answer, 201, {"Location": f"/v1/webhooks/{row.id}"}

    @blp.response(200, SubscriptionListSchema)
    def get(self) -> Any:
        """The organisation's subscriptions (without their secrets' values)."""
        session = get_session()
        query = (select(WebhookSubscription)
                 .where(WebhookSubscription.organisation_id == tenant())
                 .order_by(WebhookSubscription.id))
        return {"items": _shown(session, list(session.scalars(query)), database_now(session))}


@blp.route("/webhooks/<int:webhook_id>")
class Webhook(MethodView):
    @blp.response(200, SubscriptionSchema)
    def get(self, webhook_id: int) -> Any:
        """One subscription (without its secrets' values)."""
        session = get_session()
        return _shown(session, [_get(session, webhook_id)], database_now(session))[0]

    @blp.response(204)
    @_admin
    def delete(self, webhook_id: int) -> Any:
        """Delete the subscription, its secrets and its deliveries; nothing more is sent to it."""
        session = get_session()
        row = _get(session, webhook_id)
        session.execute(delete(WebhookDelivery).where(WebhookDelivery.subscription_id == row.id))
        session.execute(delete(WebhookSecret).where(WebhookSecret.subscription_id == row.id))
        session.delete(row)
        return Response(status=204)


@blp.route("/webhooks/<int:webhook_id>/secret")
class WebhookSecretRotation(MethodView):
    @blp.doc(requestBody={**json_body_doc(SecretRotateSchema), "required": False})
    @blp.response(200, SubscriptionCreatedSchema)
    @blp.alt_response(409, description="four secrets are valid already (too_many_secrets): rotate "
                                       "again after Retry-After seconds, or with `overlap_s: 0`",
                      headers={"Retry-After": {"schema": {"type": "integer"},
                                               "description": "seconds until the oldest overlap ends"}},
                      **_PROBLEM)
    @blp.alt_response(503, description=_NO_KEY, **_PROBLEM)
    @_admin
    def post(self, webhook_id: int) -> Any:
        """Rotate the signing secret, with an overlap.

        A new secret (shown in this answer only) signs from now on; the earlier ones keep
        signing beside it until their `valid_until` (`overlap_s`), so a receiver can switch
        without refusing a delivery. No delivery is dropped, re-sent or reordered. No body:
        a generated secret and the server's default overlap.
        """
        data = json_body(SecretRotateSchema()) if request.get_data(cache=True) else {}
        session = get_session()
        row = _get(session, webhook_id)
        key = _client_secret(data)
        box = _box()
        overlap_s = data.get("overlap_s", settings().webhook_secret_overlap_s)
        now = database_now(session)
        try:
            rotate(session, box, row.id, key, overlap_s=overlap_s, now=now)
        except TooManySecrets as full:
            wait_s = max(1, math.ceil((full.until - now).total_seconds()))
            raise ApiError(409, "too_many_secrets",
                           f"{MAX_VALID_SECRETS} secrets are valid already; rotate again after "
                           f"{full.until.isoformat()} or with overlap_s 0",
                           headers={"Retry-After": str(wait_s)}) from None
        session.flush()
        return {**_shown(session, [row], now)[0], "secret": format_secret(key)}


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
