#!/usr/bin/env bash
# Webhook subscriptions (an admin key): create (the whsec_ secret is shown once), list, a delivery,
# rotate the secret with an overlap (both sign until the old one's valid_until), deliveries, delete.
# Deliveries are signed by the Standard Webhooks specification; verify them with one of its libraries
# (api/webhooks/README.md). WEBHOOK_URL must resolve to public addresses only, unless the server runs
# with OHMTALLY_WEBHOOK_ALLOW_PRIVATE=on (tests, a closed network); the placeholder below does not
# resolve at all, so with it the create answers 422 target_not_allowed and the script stops there.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
WEBHOOK_URL="${WEBHOOK_URL:-https://jobs.example.invalid/ohmtally}"
created=$(call POST /v1/webhooks -H 'Content-Type: application/json' \
  -d "{\"url\": \"$WEBHOOK_URL\", \"events\": [\"job.created\", \"readings.accepted\", \"verdict.changed\"]}")
echo "$created"
case "$created" in *"-> HTTP 201") ;; *) exit 0 ;; esac
webhook_id=$(member id <<<"$created")
call GET /v1/webhooks
make_job EX-WEBHOOKS > /dev/null    # something to deliver: a job.created event
call POST "/v1/webhooks/$webhook_id/secret" -H 'Content-Type: application/json' -d '{"overlap_s": 3600}'
call GET "/v1/webhooks/$webhook_id/deliveries"
call DELETE "/v1/webhooks/$webhook_id"
