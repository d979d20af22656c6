# Shared by the examples: the server and a job id. Start one with `ohmtally demo` or
#   OHMTALLY_AUTH=off ohmtally serve   (loopback only)
OHMTALLY_URL="${OHMTALLY_URL:-http://127.0.0.1:8000}"
JOB_ID="${JOB_ID:-1}"
DEMO_DIR="$(cd "$(dirname "${BASH_SOURCE[0]}")/../demo" && pwd)"
