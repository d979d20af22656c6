#!/usr/bin/env bash
# POST /v1/verify: stateless, nothing is stored. JSON (all or nothing), or CSV / lines read row by row
# through an adapter; ?format= renders the same answer for a pipeline or a person.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call POST /v1/verify -H "Content-Type: application/json" --data-binary @- <<'JSON'
{"ruleset": "bs7671-2018-a2",
 "installation": {"earthing": "TN-C-S (PME)", "ze_ohm": 0.31},
 "circuits": [{"board": "DB1", "circuit": "1", "device": "B20", "cable": "2.5/1.5",
               "cable_type": "twin_and_earth", "reference_method": "C", "length_m": 18,
               "r1_r2_ohm": "0.31 Ω", "zs_ohm": "0.62 Ω", "ir_test_v": 500,
               "ir_ll_mohm": "> 999 MΩ", "ir_le_mohm": "> 999 MΩ", "polarity_ok": true}]}
JSON
# the meter's CSV export (an invented layout, read through its mapping profile), as a table for a person
call POST "/v1/verify?profile=example-semicolon-decimal-comma&format=table" -H "Content-Type: text/csv" \
  --data-binary @"$DEMO_DIR/db1-meter-export.csv"
# the logger's lines, answered as JUnit XML; Ohmtally-Failing-Circuits counts the circuits that fail
call POST "/v1/verify?adapter=lines&format=junit&fail_on=investigate" -H "Content-Type: text/plain" \
  --data-binary @"$DEMO_DIR/db2-db3-logger.log" -D - -o /dev/null | awk 'tolower($0) ~ /^ohmtally-failing|^-> http/'
