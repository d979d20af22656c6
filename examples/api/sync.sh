#!/usr/bin/env bash
# Sync for a job-management system: jobs changed since a time, verdicts with ETag / If-None-Match,
# and external references (the ids in the caller's own system), settable and filterable.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS "$OHMTALLY_URL/v1/jobs?updated_since=2026-01-01T00:00:00Z&limit=50"
echo
etag=$(curl -sS -D - -o /dev/null "$OHMTALLY_URL/v1/jobs/$JOB_ID/verdicts" | tr -d '\r' |
  awk -F': ' 'tolower($1)=="etag"{print $2}')
echo "ETag: $etag"
# Unchanged since: 304 Not Modified, no body, no records read
curl -sS -o /dev/null -w 'If-None-Match -> HTTP %{http_code}\n' -H "If-None-Match: $etag" \
  "$OHMTALLY_URL/v1/jobs/$JOB_ID/verdicts"
curl -sS -X PATCH "$OHMTALLY_URL/v1/jobs/$JOB_ID" -H 'Content-Type: application/merge-patch+json' \
  -d '{"external_ref": "crm-2291"}'
echo
curl -sS "$OHMTALLY_URL/v1/jobs?external_ref=crm-2291"
echo
