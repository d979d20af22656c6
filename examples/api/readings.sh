#!/usr/bin/env bash
# POST /v1/jobs/<id>/readings — merge readings into a job (per circuit and field, later wins).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS -X POST "$OHMTALLY_URL/v1/jobs/$JOB_ID/readings?adapter=csv&profile=example-semicolon-decimal-comma" -H "Content-Type: text/csv" \
  --data-binary @"$DEMO_DIR/db1-meter-export.csv"
echo
printf 'board=DB2 circuit=1 zs=0.61Ω r1r2=0.32\n' |
  curl -sS -X POST "$OHMTALLY_URL/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain; charset=utf-8" \
    --data-binary @-
