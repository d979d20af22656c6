# Shared by the examples (sourced, not run). A server to try them on: `make demo` (it prints its URL)
# or `OHMTALLY_AUTH=off ohmtally serve` (no keys: loopback only). With keys on, export a key from
# `ohmtally keys create` as OHMTALLY_API_KEY (webhooks.sh needs the admin scope). Every script makes
# the job it needs, so it runs on an empty database as well as on a busy one.
OHMTALLY_URL="${OHMTALLY_URL:-http://127.0.0.1:8000}"
DEMO_DIR="$(cd "$(dirname "${BASH_SOURCE[0]}")/../demo" && pwd)"
AUTH="Authorization: Bearer ${OHMTALLY_API_KEY:-}"  # a server with keys off ignores it

# call METHOD PATH [curl options…]: one request; prints the answer, then "-> HTTP <status>".
call() {
  local method=$1 path=$2
  shift 2
  curl -sS -X "$method" -H "$AUTH" "$@" -w '\n-> HTTP %{http_code}\n' "$OHMTALLY_URL$path"
}

# member NAME: one member of the JSON answer `call` printed (read from stdin).
member() {
  python3 -c 'import json, sys; print(json.loads(sys.stdin.read().rsplit("\n-> HTTP", 1)[0])[sys.argv[1]])' "$1"
}

# make_job REFERENCE: create a job (its answer printed) and set JOB_ID to its id. Job ids are
# random (a tenant's ids say nothing about anyone's job count): always take the id from the answer.
make_job() {
  local answer
  answer=$(call POST /v1/jobs -H 'Content-Type: application/json' \
    -d "{\"reference\": \"$1\", \"site\": \"Invented example site\", \"ruleset\": \"bs7671-2018-a2\"}")
  echo "$answer"
  JOB_ID=$(member id <<<"$answer")
}
