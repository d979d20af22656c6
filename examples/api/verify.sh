#!/usr/bin/env bash
# POST /v1/verify — stateless. JSON circuits (all or nothing), or CSV / lines through an adapter.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS -X POST "$OHMTALLY_URL/v1/verify" -H "Content-Type: application/json" --data-binary @- <<'JSON'
{"ruleset": "bs7671-2018-a2",
 "circuits": [{"board": "DB1", "circuit": "1", "device_kind": "breaker", "device_curve": "B",
               "device_rating_a": 32, "zs_ohm": "0.62 Ω", "ir_test_v": 500,
               "ir_le_mohm": "> 299 MΩ", "polarity_ok": true}]}
JSON
echo
curl -sS -X POST "$OHMTALLY_URL/v1/verify?adapter=csv&profile=example-semicolon-decimal-comma" -H "Content-Type: text/csv" \
  --data-binary @"$DEMO_DIR/db1-meter-export.csv"
echo
curl -sS -X POST "$OHMTALLY_URL/v1/verify?adapter=lines" -H "Content-Type: text/plain" \
  --data-binary @"$DEMO_DIR/db2-db3-logger.log"
