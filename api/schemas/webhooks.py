"""Webhook subscriptions and their deliveries, for validation and the OpenAPI document."""

from __future__ import annotations

from marshmallow import RAISE, Schema, fields, validate

from api.db.models import DELIVERY_STATUSES, EVENT_TYPES
from api.schemas.fields import Prepared, WholeNumber
from api.webhooks.secret_store import MAX_OVERLAP_S
from api.webhooks.signing import SECRET_PATTERN

_SECRET_DOC = ("a Standard Webhooks secret: `whsec_` and the standard base64 of 24–64 random bytes "
               "whose bytes take at least 16 distinct values; generated (32 bytes) when left out")

__all__ = [
    "DeliveryListSchema",
    "DeliveryQuerySchema",
    "DeliverySchema",
    "SecretRotateSchema",
    "SecretStateSchema",
    "SubscriptionCreateSchema",
    "SubscriptionCreatedSchema",
    "SubscriptionListSchema",
    "SubscriptionSchema",
]


class _Strict(Schema):
    class Meta:
        unknown = RAISE


class SubscriptionCreateSchema(_Strict):
    url = fields.String(required=True, validate=validate.Length(min=1, max=2000),
                        metadata={"description": "http(s) URL the events are POSTed to"})
    events = fields.List(fields.String(validate=validate.OneOf(EVENT_TYPES)), required=True,
                         validate=validate.Length(min=1),
                         metadata={"description": f"any of {', '.join(EVENT_TYPES)}"})
    secret = fields.String(validate=validate.Regexp(SECRET_PATTERN, error=_SECRET_DOC),
                           metadata={"description": _SECRET_DOC})
    description = fields.String(allow_none=True, validate=validate.Length(max=200))


class SecretRotateSchema(_Strict):
    secret = fields.String(validate=validate.Regexp(SECRET_PATTERN, error=_SECRET_DOC),
                           metadata={"description": _SECRET_DOC})
    overlap_s = WholeNumber(  # 2.5 is refused, never cut to 2 (the document says integer)
        validate=validate.Range(min=0, max=MAX_OVERLAP_S),
        metadata={"description": "seconds the secrets valid until now keep signing beside the new one "
                                 "(never longer than they already had); 0 ends them at once (a leaked "
                                 "secret). Default: the server's OHMTALLY_WEBHOOK_SECRET_OVERLAP_S"})


class SecretStateSchema(_Strict):
    created_at = fields.DateTime(required=True)
    valid_until = fields.DateTime(required=True, allow_none=True,
                                  metadata={"description": "null for the current secret; deliveries "
                                                           "carry a signature by each listed secret"})


class SubscriptionSchema(_Strict):
    id = fields.Integer(required=True)
    url = fields.String(required=True)
    events = fields.List(fields.String(), required=True)
    description = fields.String(required=True, allow_none=True)
    created_at = fields.DateTime(required=True)
    deliveries_href = fields.String(required=True)
    secrets = fields.List(fields.Nested(SecretStateSchema), required=True,
                          metadata={"description": "the secrets that sign deliveries now, newest first "
                                                   "(their values are never shown again)"})


class SubscriptionCreatedSchema(SubscriptionSchema):
    secret = fields.String(required=True, metadata={"description": "the new signing secret (`whsec_…`), "
                                                                   "shown in this answer only"})


class SubscriptionListSchema(_Strict):
    items = fields.List(fields.Nested(SubscriptionSchema), required=True)


class DeliveryQuerySchema(_Strict):
    status = fields.String(validate=validate.OneOf(DELIVERY_STATUSES))
    limit = fields.Integer(validate=validate.Range(min=1, max=500))
    cursor = fields.String(metadata={"description": "opaque; the next_cursor of the previous page"})


class DeliverySchema(_Strict):
    id = fields.Integer(required=True)
    subscription_id = fields.Integer(required=True)
    event_id = fields.String(required=True, metadata={"description": "the webhook-id header"})
    event = fields.String(required=True, validate=validate.OneOf(EVENT_TYPES))
    job_id = fields.Integer(required=True, allow_none=True)
    status = fields.String(required=True, validate=validate.OneOf(DELIVERY_STATUSES))
    attempts = fields.Integer(required=True)
    created_at = fields.DateTime(required=True)
    last_attempt_at = fields.DateTime(required=True, allow_none=True)
    next_attempt_at = fields.DateTime(required=True, allow_none=True)
    last_status_code = fields.Integer(required=True, allow_none=True)
    last_error = fields.String(required=True, allow_none=True)
    delivered_at = fields.DateTime(required=True, allow_none=True)


class DeliveryListSchema(_Strict):
    items = Prepared(fields.Nested(DeliverySchema), dict, required=True)  # WebhookDelivery.as_dict
    next_cursor = fields.String(required=True, allow_none=True)
    limit = fields.Integer(required=True)
