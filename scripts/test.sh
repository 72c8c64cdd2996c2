#!/usr/bin/env bash
# npm test: the same services as npm start (its own ports, data folder and database), then every test.
set -euo pipefail
cd "$(dirname "$0")/.."
. scripts/lib/prepare.sh
ensure_node_modules
ensure_postgresql
ensure_chromium
exec node --import tsx scripts/test.ts "$@"
