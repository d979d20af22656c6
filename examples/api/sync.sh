#!/usr/bin/env bash
# Sync for a job-management system: jobs changed since a time, verdicts with ETag / If-None-Match
# (304 while nothing changed), and external references (the ids in the caller's own system).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
since=$(date -u +%Y-%m-%dT%H:%M:%SZ)
make_job EX-SYNC
printf 'board=DB1 circuit=1 zs=0.44 r1r2=0.21\n' |
  call POST "/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain" --data-binary @- -o /dev/null
call GET "/v1/jobs?updated_since=$since&limit=50"
etag=$(curl -sS -H "$AUTH" -D - -o /dev/null "$OHMTALLY_URL/v1/jobs/$JOB_ID/verdicts" | tr -d '\r' |
  awk -F': ' 'tolower($1)=="etag"{print $2}')
echo "ETag: $etag"
call GET "/v1/jobs/$JOB_ID/verdicts" -H "If-None-Match: $etag"   # unchanged: 304, no body
call PATCH "/v1/jobs/$JOB_ID" -H 'Content-Type: application/merge-patch+json' -d '{"external_ref": "crm-2291"}'
call PATCH "/v1/jobs/$JOB_ID/circuits/DB1/1" -H 'Content-Type: application/merge-patch+json' \
  -d '{"external_ref": "asset-9913"}'
call GET "/v1/jobs?external_ref=crm-2291"
call GET "/v1/jobs/$JOB_ID/verdicts" -H "If-None-Match: $etag" -o /dev/null   # changed: 200 again
