#!/usr/bin/env bash
# Webhook subscriptions: create (admin scope; the whsec_ secret is shown once), list, rotate the secret
# with an overlap (both secrets sign until the old one's valid_until), deliveries, delete.
# The URL must resolve to public addresses only unless OHMTALLY_WEBHOOK_ALLOW_PRIVATE=on: with the
# placeholder URL below the create answers a 422 problem with code target_not_allowed (it never says
# what the name resolved to). Set WEBHOOK_URL to your receiver and WEBHOOK_ID to the id it returns.
# Verifying a delivery on your side: api/webhooks/README.md (the `standardwebhooks` package).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
WEBHOOK_URL="${WEBHOOK_URL:-https://jobs.example.invalid/ohmtally}"
curl -sS -X POST "$OHMTALLY_URL/v1/webhooks" -H 'Content-Type: application/json' \
  -d "{\"url\": \"$WEBHOOK_URL\", \"events\": [\"job.created\", \"readings.accepted\", \"verdict.changed\"]}"
echo
curl -sS "$OHMTALLY_URL/v1/webhooks"
echo
WEBHOOK_ID="${WEBHOOK_ID:-1}"
# A new secret now; the earlier one keeps signing beside it for an hour (0 ends it at once).
curl -sS -X POST "$OHMTALLY_URL/v1/webhooks/$WEBHOOK_ID/secret" -H 'Content-Type: application/json' \
  -d '{"overlap_s": 3600}'
echo
curl -sS "$OHMTALLY_URL/v1/webhooks/$WEBHOOK_ID/deliveries"
echo
curl -sS -o /dev/null -w 'DELETE -> HTTP %{http_code}\n' -X DELETE "$OHMTALLY_URL/v1/webhooks/$WEBHOOK_ID"
