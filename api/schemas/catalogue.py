"""What the server offers: health, rulesets (limits with sources), adapters and profiles."""

from __future__ import annotations

from marshmallow import INCLUDE, RAISE, Schema, fields

from api.schemas.fields import Prepared
from api.schemas.verdicts import RulesetRefSchema

__all__ = [
    "AdapterListSchema",
    "HealthSchema",
    "RulesetDetailSchema",
    "RulesetListSchema",
]


class HealthSchema(Schema):
    class Meta:
        unknown = RAISE

    status = fields.String(required=True)
    version = fields.String(required=True)
    api = fields.String(required=True)


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
