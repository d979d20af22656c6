#!/usr/bin/env bash
# GET /v1/jobs/<id>/circuits (?history=true) and GET /v1/jobs/<id>/verdicts, a page at a time:
# ?limit= and ?board=; next_cursor (also in the Link header, rel="next") → ?cursor= for the next page.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
make_job EX-CIRCUITS
call POST "/v1/jobs/$JOB_ID/readings?adapter=lines" -H "Content-Type: text/plain" \
  --data-binary @"$DEMO_DIR/db2-db3-logger.log" -o /dev/null
call GET "/v1/jobs/$JOB_ID/circuits?history=true&board=DB3"
page=$(call GET "/v1/jobs/$JOB_ID/verdicts?limit=2")
echo "$page"
cursor=$(member next_cursor <<<"$page")
call GET "/v1/jobs/$JOB_ID/verdicts?limit=2&cursor=$cursor" -o /dev/null   # the next page
call GET "/v1/jobs/$JOB_ID/verdicts?format=table&board=DB2"                  # for a person
