#!/usr/bin/env bash
# The facts recorded once, which circuits inherit: PUT/GET /v1/jobs/<id>/installation,
# PUT/GET /v1/jobs/<id>/boards/<board>, GET /v1/jobs/<id>/boards. A circuit posted afterwards with
# only what the meter measured is judged with them.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
make_job EX-SITE
call PUT "/v1/jobs/$JOB_ID/installation" -H "Content-Type: application/json" \
  -d '{"earthing": "TN-C-S (PME)", "ze_ohm": 0.24, "pfc_ka": 1.1, "test_temp_c": 18}'
call PUT "/v1/jobs/$JOB_ID/boards/DB2" -H "Content-Type: application/json" \
  -d '{"location": "Garage", "board_fed_from": "DB1/5", "zdb_ohm": 0.41, "pfc_ka": 0.6}'
call GET "/v1/jobs/$JOB_ID/boards"
printf 'board=DB2 circuit=1 device=B16 cable=2.5/1.5 zs=0.68 r1r2=0.27\n' |
  call POST "/v1/jobs/$JOB_ID/readings" -H "Content-Type: text/plain" --data-binary @-
call GET "/v1/jobs/$JOB_ID/installation?history=true"
