#!/usr/bin/env bash
# GET /v1/jobs/<id>/uploads and GET /v1/jobs/<id>/uploads/<upload_id>: every body as received.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
make_job EX-UPLOADS
posted=$(call POST "/v1/jobs/$JOB_ID/readings?adapter=lines" -H "Content-Type: text/plain" \
  --data-binary @"$DEMO_DIR/db2-db3-logger.log")
echo "$posted"
upload_id=$(python3 -c 'import json, sys; print(json.loads(sys.argv[1].rsplit("\n-> HTTP", 1)[0])["upload"]["id"])' "$posted")
call GET "/v1/jobs/$JOB_ID/uploads"
call GET "/v1/jobs/$JOB_ID/uploads/$upload_id" -D - | sed -n '1,3p; /^[Ee][Tt]ag/p; /^-> HTTP/p'
