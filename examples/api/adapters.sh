#!/usr/bin/env bash
# GET /v1/adapters: the input adapters, the media types they read, and the mapping profiles.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call GET /v1/adapters
