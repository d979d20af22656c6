#!/usr/bin/env bash
# POST /v1/jobs, GET /v1/jobs (cursor pages, ?reference=, ?external_ref=), GET /v1/jobs/<id>.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call POST /v1/jobs -H "Content-Type: application/json" \
  -d '{"reference": "EX-0042", "site": "Invented example site", "ruleset": "bs7671-2018-a2", "external_ref": "crm-77"}'
make_job EX-0043
call GET "/v1/jobs?limit=1"        # next_cursor: pass it back as ?cursor= for the next page
call GET "/v1/jobs?reference=EX-0042"
call GET "/v1/jobs/$JOB_ID"
