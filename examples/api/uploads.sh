#!/usr/bin/env bash
# GET /v1/jobs/<id>/uploads and GET /v1/jobs/<id>/uploads/<upload_id> (the raw bytes as received).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
UPLOAD_ID="${UPLOAD_ID:-1}"
curl -sS "$OHMTALLY_URL/v1/jobs/$JOB_ID/uploads"
echo
curl -sS -D - "$OHMTALLY_URL/v1/jobs/$JOB_ID/uploads/$UPLOAD_ID"
