#!/usr/bin/env bash
# Problem details (RFC 9457): a bad field, an unknown ruleset, a wrong content type.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS -X POST "$OHMTALLY_URL/v1/verify" -H "Content-Type: application/json" \
  -d '{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": true, "colour": "red"}]}'
echo
curl -sS -X POST "$OHMTALLY_URL/v1/verify?ruleset=nope" -H "Content-Type: application/json" -d '{"circuits": []}'
echo
curl -sS -X POST "$OHMTALLY_URL/v1/verify" -H "Content-Type: image/png" --data-binary 'x'
