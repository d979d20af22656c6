#!/usr/bin/env bash
# Problem details (RFC 9457): a bad field (422, a pointer per field), an unknown ruleset (404 with the
# choices), a content type no adapter reads (415), a bad CSV row among good ones (200, in "rejected").
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call POST /v1/verify -H "Content-Type: application/json" \
  -d '{"circuits": [{"board": "DB1", "circuit": "1", "zs_ohm": true, "colour": "red"}]}'
call POST "/v1/verify?ruleset=nope" -H "Content-Type: application/json" -d '{"circuits": []}'
call POST /v1/verify -H "Content-Type: image/png" --data-binary 'x'
printf 'board,circuit,zs\nDB1,1,0.41\nDB1,2,0.4 kA\n' |
  call POST /v1/verify -H "Content-Type: text/csv" --data-binary @-
