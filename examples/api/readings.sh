#!/usr/bin/env bash
# POST /v1/jobs/<id>/readings: readings merge into the job's circuit records (later readings win,
# earlier kept in history). The answer has the verdicts of the circuits the post touched.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
make_job EX-READINGS
call POST "/v1/jobs/$JOB_ID/readings?profile=example-semicolon-decimal-comma" -H "Content-Type: text/csv" \
  --data-binary @"$DEMO_DIR/db1-meter-export.csv"
# one line as a field logger posts it, with a key of its own per batch (keys are per organisation: a
# key reused for another request is a 409); resent with the same key, the first answer comes back
# (header Ohmtally-Replay: when it was first given) and nothing is merged twice
key="example-batch-$JOB_ID-1"
for attempt in 1 2; do
  printf 'board=DB2 circuit=1 zs=0.61Ω r1r2=0.32\n' |
    call POST "/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain; charset=utf-8" \
      -H "Idempotency-Key: $key" --data-binary @- -D - | awk 'tolower($0) ~ /^ohmtally-replay|^\{|^-> http/'
done
