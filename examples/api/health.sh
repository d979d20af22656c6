#!/usr/bin/env bash
# GET /v1/health — liveness and version, no auth.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS -H "X-Request-Id: example-health-1" "$OHMTALLY_URL/v1/health"
