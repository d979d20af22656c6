#!/usr/bin/env bash
# Periodic inspection: two visits of one installation (the same installation_ref), the readings of each
# dated by tested_on. The later job's verdicts compare each circuit with the earlier visit (the
# previous_visit check), and GET /v1/jobs/<id>/changes lists what changed and which changes need a look.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
# A reference of its own per run, so the earlier visits of another run are never this one's previous visit.
INSTALLATION="EX-INST-$(date +%s)-$$"
create() {  # create REFERENCE DATE: a job of the installation, its readings taken on DATE; sets JOB_ID
  local answer
  answer=$(call POST /v1/jobs -H 'Content-Type: application/json' \
    -d "{\"reference\": \"$1\", \"site\": \"Invented example site\", \"installation_ref\": \"$INSTALLATION\", \"tested_on\": \"$2\"}")
  echo "$answer"
  JOB_ID=$(member id <<<"$answer")
}
create EX-VISIT-2021 2021-09-14
printf 'board=DB1 circuit=1 device=B32 cable=2.5/1.5 r1r2=0.36 zs=0.58 ir_le=>999\n' |
  call POST "/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain" --data-binary @-
create EX-VISIT-2026 2026-09-10
# the insulation has fallen to a few MΩ and R1+R2 has risen by a third: both need a look
printf 'board=DB1 circuit=1 device=B32 cable=2.5/1.5 r1r2=0.48 zs=0.7 ir_le=3.2\n' |
  call POST "/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain" --data-binary @-
call GET "/v1/jobs/$JOB_ID/changes"
