#!/usr/bin/env bash
# GET /v1/rulesets and GET /v1/rulesets/<id>: the limits in force, each with its source and marker.
set -euo pipefail
source "$(dirname "$0")/_common.sh"
call GET /v1/rulesets
call GET /v1/rulesets/bs7671-2018-a2
