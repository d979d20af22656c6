"""``/v1/health``, ``/v1/rulesets``, ``/v1/rulesets/<id>``, ``/v1/adapters``: what the server offers."""

from __future__ import annotations

from typing import Any

from flask.views import MethodView
from flask_smorest import Blueprint

from adapters.profiles import list_profiles
from adapters.registry import list_adapters
from api.routes.common import resolve_ruleset, settings
from api.schemas.catalogue import AdapterListSchema, HealthSchema, RulesetDetailSchema, RulesetListSchema
from engine import DEFAULT_RULESET, __version__, builtin_ruleset_ids, load_ruleset

__all__ = ["blp"]

blp = Blueprint("catalogue", __name__, url_prefix="/v1", description="Health, rulesets and adapters")


@blp.route("/health")
class Health(MethodView):
    @blp.doc(security=[])  # the one route without an API key (api.http.auth.PUBLIC_PATHS)
    @blp.response(200, HealthSchema)
    def get(self) -> Any:
        """Liveness and version (no auth, no database)."""
        return {"status": "ok", "version": __version__, "api": "v1"}


@blp.route("/rulesets")
class Rulesets(MethodView):
    @blp.response(200, RulesetListSchema)
    def get(self) -> Any:
        """The built-in rulesets and the default."""
        return {"default": DEFAULT_RULESET, "rulesets": [load_ruleset(r) for r in builtin_ruleset_ids()]}


@blp.route("/rulesets/<string:ruleset_id>")
class RulesetDetail(MethodView):
    @blp.response(200, RulesetDetailSchema)
    def get(self, ruleset_id: str) -> Any:
        """The limits in force: every entry with its value, source and marker."""
        return resolve_ruleset(ruleset_id, parameter="ruleset_id").as_dict()


@blp.route("/adapters")
class Adapters(MethodView):
    @blp.response(200, AdapterListSchema)
    def get(self) -> Any:
        """Input adapters (with the media types they read) and mapping profiles."""
        directory = settings().profile_dir
        return {"adapters": list_adapters(directory), "profiles": list_profiles(directory)}
