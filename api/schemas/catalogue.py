"""What the server offers: health and readiness, rulesets (limits with sources), adapters and profiles."""

from __future__ import annotations

from marshmallow import INCLUDE, RAISE, Schema, fields

from api.schemas.fields import Prepared
from api.schemas.verdicts import RulesetRefSchema

__all__ = [
    "AdapterListSchema",
    "HealthSchema",
    "ReadySchema",
    "RulesetDetailSchema",
    "RulesetListSchema",
]


class HealthSchema(Schema):
    class Meta:
        unknown = RAISE

    status = fields.String(required=True)
    version = fields.String(required=True)
    api = fields.String(required=True)


class SchemaRevisionSchema(Schema):
    class Meta:
        unknown = RAISE

    revision = fields.String(required=True, metadata={"description": "the database's migration revision"})
    head = fields.String(required=True, metadata={"description": "the newest revision this build carries"})
    serves_from = fields.String(required=True, allow_none=True, metadata={
        "description": "the oldest code revision that can serve the database's schema (raised by "
                       "contract migrations); null before it was first recorded"})


class ReadySchema(Schema):
    class Meta:
        unknown = RAISE

    status = fields.String(required=True, metadata={"description": "always `ready` (else a 503 problem)"})
    version = fields.String(required=True)
    schema = fields.Nested(SchemaRevisionSchema, required=True)


class EntrySchema(Schema):
    class Meta:
        unknown = RAISE

    value = fields.Raw(required=True)
    source = fields.String(required=True)
    marker = fields.String(required=True)
    marker_meaning = fields.String(required=True)
    note = fields.String()


class RulesetListSchema(Schema):
    class Meta:
        unknown = RAISE

    default = fields.String(required=True)
    rulesets = fields.List(fields.Nested(RulesetRefSchema), required=True)


class RulesetDetailSchema(RulesetRefSchema):
    sources = fields.Dict(keys=fields.String(), values=fields.String(), required=True)
    sections = fields.Dict(keys=fields.String(),
                           values=fields.Dict(keys=fields.String(), values=fields.Nested(EntrySchema)),
                           required=True, metadata={"description": "section → key → entry"})


class _Open(Schema):
    """Adapters and profiles come from plug-ins, which may say more than these fields."""

    class Meta:
        unknown = INCLUDE


class AdapterSchema(_Open):
    name = fields.String(required=True)
    description = fields.String()
    media_types = fields.List(fields.String())
    extensions = fields.List(fields.String())


class ProfileSchema(_Open):
    name = fields.String(required=True)


class AdapterListSchema(Schema):
    class Meta:
        unknown = RAISE

    # plug-ins may say more than these fields: their entries are answered as they are
    adapters = Prepared(fields.Nested(AdapterSchema), dict, required=True)
    profiles = Prepared(fields.Nested(ProfileSchema), dict, required=True)
