#!/usr/bin/env bash
# GET /v1/jobs/<id>/circuits (?history=true) and GET /v1/jobs/<id>/verdicts.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS "$OHMTALLY_URL/v1/jobs/$JOB_ID/circuits?history=true"
echo
curl -sS "$OHMTALLY_URL/v1/jobs/$JOB_ID/verdicts"
