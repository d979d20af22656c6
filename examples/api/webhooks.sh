#!/usr/bin/env bash
# Webhook subscriptions: create (admin scope; the secret is shown once), list, deliveries, delete.
# The URL must not resolve to a loopback or private address unless OHMTALLY_WEBHOOK_ALLOW_PRIVATE=on,
# and must resolve: with the placeholder URL the create below answers a 422 problem naming the reason
# (set WEBHOOK_URL to your receiver, WEBHOOK_ID to the id it returns).
set -euo pipefail
source "$(dirname "$0")/_common.sh"
WEBHOOK_URL="${WEBHOOK_URL:-https://jobs.example.invalid/ohmtally}"
curl -sS -X POST "$OHMTALLY_URL/v1/webhooks" -H 'Content-Type: application/json' \
  -d "{\"url\": \"$WEBHOOK_URL\", \"events\": [\"job.created\", \"readings.accepted\", \"verdict.changed\"]}"
echo
curl -sS "$OHMTALLY_URL/v1/webhooks"
echo
WEBHOOK_ID="${WEBHOOK_ID:-1}"
curl -sS "$OHMTALLY_URL/v1/webhooks/$WEBHOOK_ID/deliveries"
echo
curl -sS -o /dev/null -w 'DELETE -> HTTP %{http_code}\n' -X DELETE "$OHMTALLY_URL/v1/webhooks/$WEBHOOK_ID"
