#!/usr/bin/env bash
# GET /v1/adapters — input adapters, the media types they read, and mapping profiles.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
curl -sS "$OHMTALLY_URL/v1/adapters"
