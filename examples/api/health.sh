#!/usr/bin/env bash
# GET /v1/health (liveness: no key, no database), GET /v1/ready (readiness: the database answers and
# its schema is one this build serves; no key), GET /v1/metrics (Prometheus text; an admin key).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call GET /v1/health -H "X-Request-Id: example-health-1"
call GET /v1/ready
call GET /v1/metrics | sed -n '/^ohmtally_build_info/p; /^-> HTTP/p'
