"""Bearer API keys on every route but health and the OpenAPI document; the request's organisation.

Invariants:
- ``OHMTALLY_AUTH=on``: a request to any path but :data:`PUBLIC_PATHS` needs
  ``Authorization: Bearer oht_…`` naming a key that is neither revoked nor
  expired, else 401 with ``WWW-Authenticate: Bearer`` (RFC 6750 §3). A key
  without the scope the route needs gets 403 (``error="insufficient_scope"``).
  The secret is never echoed in a problem or a log line.
- Scopes: GET/HEAD need ``read``; ``POST /v1/verify`` (stateless) needs
  ``read``; every other write needs ``write``; a view marked
  :func:`require_scope` needs that scope. ``admin`` includes the other two.
- The OpenAPI document is public: it describes the API's shape, holds no
  tenant data, and clients and the fuzzer need it before they have a key.
- Every request that touches jobs has one organisation,
  :func:`current_organisation_id`: the key's, or with ``OHMTALLY_AUTH=off``
  the seeded ``local`` one. The repository filters every job query by it, so
  another organisation's job is a 404 exactly like a job that does not exist.
- Every response carries ``X-Content-Type-Options: nosniff`` and a sandboxing
  CSP (uploads are served back as data, never as a page); an authenticated
  one also ``Cache-Control: no-store``.
- Fails closed: a request context with no organisation resolved raises, it is
  never treated as "all organisations".
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import timedelta
from typing import Any, TypeVar

from flask import Flask, Response, current_app, g, has_request_context, request
from sqlalchemy import select, update

from api.db.models import SCOPES, ApiKey, Organisation, utcnow
from api.db.session import read_session, write_session
from api.errors import ApiError
from api.http.keys import find_key
from api.render import HTML_STYLE_SOURCE

__all__ = [
    "PUBLIC_PATHS",
    "current_api_key_id",
    "current_organisation_id",
    "init_app",
    "require_scope",
    "required_scope",
    "tenant",
]

PUBLIC_PATHS = frozenset({"/v1/health", "/v1/ready", "/v1/openapi.json",
                          "/v1/docs", "/v1/docs/swagger-ui.css", "/v1/docs/swagger-ui-bundle.js"})
_REALM = 'Bearer realm="ohmtally"'
_LAST_USED_STEP = timedelta(hours=1)  # last_used_at is kept to the hour: no write on every read
_F = TypeVar("_F", bound=Callable[..., Any])


def require_scope(scope: str) -> Callable[[_F], _F]:
    """Mark a view (function or MethodView method) as needing ``scope``."""
    if scope not in SCOPES:
        raise ValueError(f"unknown scope {scope!r}")

    def mark(view: _F) -> _F:
        view._ohmtally_scope = scope  # type: ignore[attr-defined]
        return view

    return mark


def required_scope(app: Flask) -> str:
    """The scope the current request needs (see the module's invariants)."""
    view = app.view_functions.get(request.endpoint or "")
    cls = getattr(view, "view_class", None)
    method = getattr(cls, request.method.lower(), None) if cls is not None else None
    marked = getattr(method, "_ohmtally_scope", None) or getattr(view, "_ohmtally_scope", None)
    if marked:
        return str(marked)
    if request.method in ("GET", "HEAD", "OPTIONS"):
        return "read"
    if request.method == "POST" and request.path.rstrip("/") == "/v1/verify":
        return "read"  # nothing is stored: computing verdicts is reading the rules
    return "write"


def _unauthorised(code: str, detail: str, error: str | None = None) -> ApiError:
    challenge = _REALM + (f', error="{error}"' if error else "")
    return ApiError(401, code, detail, headers={"WWW-Authenticate": challenge})


def _bearer_token() -> str:
    header = request.headers.get("Authorization")
    if header is None:
        raise _unauthorised("missing_api_key", "send an API key: Authorization: Bearer oht_…")
    scheme, _, token = header.strip().partition(" ")
    if scheme.lower() != "bearer" or not token.strip():
        raise _unauthorised("invalid_api_key", "the Authorization header must be 'Bearer <API key>'",
                            "invalid_request")
    return token.strip()


def _authenticate(app: Flask) -> None:
    # The key is looked up in a reader's session of its own: authenticating never takes
    # the SQLite writer lock, and a write request's own transaction starts at its first
    # real query (a view that parses a body first does not hold the lock while it parses).
    with read_session() as session:
        key = find_key(session, _bearer_token())
        if key is None:  # never say which part was wrong, never echo the token
            raise _unauthorised("invalid_api_key", "the API key is not valid", "invalid_token")
        now = utcnow()
        if key.revoked_at is not None:
            raise _unauthorised("revoked_api_key", f"API key {key.id} was revoked", "invalid_token")
        if key.expires_at is not None and now >= key.expires_at:
            raise _unauthorised("expired_api_key", f"API key {key.id} has expired", "invalid_token")
        needed = required_scope(app)
        challenge = f'{_REALM}, error="insufficient_scope", scope="{needed}"'
        held = key.scope_set
        if needed not in held and "admin" not in held:
            raise ApiError(403, "insufficient_scope",
                           f"API key {key.id} has scope(s) {key.scopes}; this request needs {needed!r}",
                           headers={"WWW-Authenticate": challenge})
        g.api_key_id = key.id
        g.organisation_id = key.organisation_id
        stale = key.last_used_at is None or now - key.last_used_at >= _LAST_USED_STEP
    if stale:  # kept to the hour, so this write is rare; its own short transaction
        with write_session() as writer:
            writer.execute(update(ApiKey).where(ApiKey.id == g.api_key_id).values(last_used_at=now))
            writer.commit()


def _safe_headers(response: Response) -> Response:
    # Everything we return is data: an upload served back with the content type its
    # sender claimed (text/html …) must not be sniffed or run by a browser.
    response.headers.setdefault("X-Content-Type-Options", "nosniff")
    # The one exception is our own verdicts page (format=html): its inline stylesheet, by its hash.
    response.headers.setdefault("Content-Security-Policy",
                                f"default-src 'none'; style-src {HTML_STYLE_SOURCE}; sandbox")
    if g.get("api_key_id") is not None:  # a tenant's data: no shared cache may keep it
        response.headers.setdefault("Cache-Control", "no-store")
    return response


def init_app(app: Flask) -> None:
    """Install the key check (with OHMTALLY_AUTH=off: none; every request is the local organisation)."""
    auth_on = bool(app.extensions["ohmtally.settings"].auth)

    @app.before_request
    def _check_key() -> None:
        if request.path.rstrip("/") in PUBLIC_PATHS or not auth_on:
            return
        _authenticate(app)

    app.after_request(_safe_headers)
    options = dict(app.config.get("API_SPEC_OPTIONS") or {})
    options["components"] = {"securitySchemes": {"apiKey": {
        "type": "http", "scheme": "bearer", "bearerFormat": "oht_ API key",
        "description": "an API key from `ohmtally keys create`; scopes read, write, admin"}}}
    if auth_on:
        options["security"] = [{"apiKey": []}]
    app.config["API_SPEC_OPTIONS"] = options


def current_api_key_id() -> int | None:
    return g.get("api_key_id") if has_request_context() else None


def current_organisation_id() -> int | None:
    """The request's organisation id; ``None`` outside a request (CLI, scripts)."""
    if not has_request_context():
        return None
    return tenant()


def tenant() -> int:
    """The request's organisation id, which every job query is limited to (inside a request only)."""
    found = g.get("organisation_id")
    if found is not None:
        return int(found)
    if current_app.extensions["ohmtally.settings"].auth:
        raise RuntimeError("no organisation for this request: the key check did not run")
    local = current_app.extensions.get("ohmtally.local_org_id")
    if local is None:
        with read_session() as session:
            org = session.scalars(select(Organisation).where(Organisation.slug == "local")).first()
        if org is None:
            raise ApiError(500, "no_organisation", "the 'local' organisation is missing; "
                           "re-run `ohmtally db upgrade` on a fresh database")
        local = current_app.extensions["ohmtally.local_org_id"] = org.id
    g.organisation_id = local
    return int(local)
