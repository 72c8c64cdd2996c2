#!/usr/bin/env bash
# npm start: install what is missing, bring up PostgreSQL and the local fakes, serve Beamwarden.
set -euo pipefail
cd "$(dirname "$0")/.."
. scripts/lib/prepare.sh
ensure_node_modules
ensure_postgresql
exec node --import tsx scripts/start.ts "$@"
