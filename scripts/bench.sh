#!/usr/bin/env bash
# npm run bench: the booking benchmark (bench/run.ts) on its own PostgreSQL database and ports.
set -euo pipefail
cd "$(dirname "$0")/.."
. scripts/lib/prepare.sh
ensure_node_modules
ensure_postgresql
# npm run bench -- controllers: the controller API bench (bench/controllers.ts)
if [ "${1:-}" = "controllers" ]; then shift; exec node --import tsx bench/controllers.ts "$@"; fi
exec node --import tsx bench/run.ts "$@"
