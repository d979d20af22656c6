#!/usr/bin/env bash
# POST /v1/jobs, GET /v1/jobs (cursor pages, ?reference=), GET /v1/jobs/<id>.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS -X POST "$OHMTALLY_URL/v1/jobs" -H "Content-Type: application/json" \
  -d '{"reference": "EX-0042", "site": "Invented example site", "ruleset": "bs7671-2018-a2", "external_ref": "crm-77"}'
echo
curl -sS "$OHMTALLY_URL/v1/jobs?limit=2"
echo
curl -sS "$OHMTALLY_URL/v1/jobs?reference=EX-0042"
echo
curl -sS "$OHMTALLY_URL/v1/jobs/$JOB_ID"
