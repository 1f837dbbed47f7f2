#!/usr/bin/env bash
# The server the end-to-end tests talk to: the production build on a fresh demo database.
set -euo pipefail
cd "$(dirname "$0")/.."
port=${1:-4400}
dir="tmp/e2e-data-$port"
rm -rf "$dir"
export TILLER_DATA_DIR="$dir" PORT="$port" NODE_ENV=production SESSION_SECRET=e2e-secret-e2e-secret-e2e-secret-e2e PUBLIC_URL="http://127.0.0.1:$port"
node bin/tiller.js demo --no-sessions >/dev/null
exec npx tsx server.ts
