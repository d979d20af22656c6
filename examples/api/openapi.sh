#!/usr/bin/env bash
# GET /v1/openapi.json (the OpenAPI 3.1 document) and GET /v1/docs (the same as a page); no key.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call GET /v1/openapi.json | sed -n '1s/^\(.\{300\}\).*/\1 …/p; /^-> HTTP/p'
call GET /v1/docs -o /dev/null
