"""``GET /v1/docs``: the API reference as a page, with every file it needs served by this server.

Invariants:
- The page and its files need no API key, like ``/v1/openapi.json``
  (:data:`api.http.auth.PUBLIC_PATHS`): they describe the API's shape and hold
  no tenant data.
- No request leaves the server. The page is Swagger UI (version 5, which
  reads OpenAPI 3.1) from the ``flask-swagger-ui`` package's copy of its
  distribution files, served from ``/v1/docs/<file>``; the page links only
  to relative, same-origin URLs, turns off Swagger UI's online validator
  badge (``validatorUrl: null``), and its Content-Security-Policy limits
  scripts, styles, images, fonts and fetches to this origin (images also to
  ``data:`` URLs inside the stylesheet), so a browser refuses any other.
- Only the files named in :data:`ASSETS` are served, with their own media
  types (the server answers ``nosniff``), a validator (ETag) and an hour of caching.
- The one inline script (Swagger UI's start) is allowed by its SHA-256, not
  by ``'unsafe-inline'``.
- Both routes are in the OpenAPI document (``security: []``), so the
  document lists every path the server answers.
"""

from __future__ import annotations

import base64
import functools
import hashlib
from importlib import resources
from typing import Any

from flask import Response, request
from flask.views import MethodView
from flask_smorest import Blueprint

from api.errors import PROBLEM_MEDIA_TYPE
from api.schemas.errors import ProblemSchema

__all__ = ["ASSETS", "PAGE_CSP", "blp"]

blp = Blueprint("docs", __name__, url_prefix="/v1", description="The API reference as a page")

# file of Swagger UI's distribution → the media type it is served with
ASSETS: dict[str, str] = {
    "swagger-ui.css": "text/css; charset=utf-8",
    "swagger-ui-bundle.js": "text/javascript; charset=utf-8",
}
_DIST = resources.files("flask_swagger_ui").joinpath("dist")

# Relative URLs: /v1/docs → /v1/openapi.json and /v1/docs/<file>, also behind a proxy's path prefix.
_START = ('SwaggerUIBundle({url: "openapi.json", dom_id: "#reference", validatorUrl: null, '
          'deepLinking: true, defaultModelsExpandDepth: 0, displayRequestDuration: true});')
_START_SOURCE = "'sha256-" + base64.b64encode(hashlib.sha256(_START.encode()).digest()).decode() + "'"

PAGE_CSP = ("default-src 'none'; "
            f"script-src 'self' {_START_SOURCE}; "
            # Swagger UI's stylesheet draws its icons from data: SVG URLs (no request is made)
            "style-src 'self'; img-src 'self' data:; font-src 'self'; "
            "connect-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'")

_PAGE = f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>ohmtally API reference</title>
<link rel="icon" href="data:,">
<link rel="stylesheet" href="docs/swagger-ui.css">
</head>
<body>
<noscript><p>This reference is drawn by a script. The same description, as data, is at
<a href="openapi.json">openapi.json</a> (OpenAPI 3.1).</p></noscript>
<div id="reference"></div>
<script src="docs/swagger-ui-bundle.js"></script>
<script>{_START}</script>
</body>
</html>
"""

_HTML = {"schema": {"type": "string"}}


@blp.route("/docs")
class ReferencePage(MethodView):
    @blp.doc(security=[])  # no API key (api.http.auth.PUBLIC_PATHS)
    @blp.response(200, {"type": "string"}, content_type="text/html",
                  description="the reference page (Swagger UI reading /v1/openapi.json)")
    def get(self) -> Any:
        """The API reference as a page (no auth); every file it loads comes from this server."""
        return Response(_PAGE, status=200, content_type="text/html; charset=utf-8",
                        headers={"Content-Security-Policy": PAGE_CSP, "Cache-Control": "no-cache"})


@blp.route("/docs/<any({}):asset>".format(", ".join(f'"{name}"' for name in ASSETS)))
class ReferenceAsset(MethodView):
    @blp.doc(security=[], responses={
        200: {"content": {media.split(";")[0]: _HTML for media in ASSETS.values()}},
        304: {"description": "unchanged since that ETag"}})
    @blp.response(200, {"type": "string"}, content_type="text/css",
                  description="a file of Swagger UI's distribution, as the package ships it")
    @blp.alt_response(404, description="no such file", schema=ProblemSchema, content_type=PROBLEM_MEDIA_TYPE)
    def get(self, asset: str) -> Any:
        """A file the reference page loads (no auth)."""
        data, tag = _asset(asset)
        response = Response(data, status=200, content_type=ASSETS[asset])
        response.set_etag(tag)
        response.cache_control.public = True
        response.cache_control.max_age = 3600
        return response.make_conditional(request)


@functools.cache
def _asset(name: str) -> tuple[bytes, str]:
    """A file's bytes and its ETag, read once per process (the bundle is 1.7 MB)."""
    data = _DIST.joinpath(name).read_bytes()
    return data, hashlib.sha256(data).hexdigest()[:32]
