#!/usr/bin/env bash
# GET /v1/openapi.json — the OpenAPI 3.1 document.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS "$OHMTALLY_URL/v1/openapi.json"
