#!/usr/bin/env bash
# Every test Tiller has, on a fresh machine: installs what the tests need beyond npm
# (Debian's chromium and postgresql) when missing, then runs the unit and integration
# suites, the PostgreSQL path, and the end-to-end suite against the production build.
set -euo pipefail
cd "$(dirname "$0")/.."

need=()
[ -x /usr/bin/chromium ] || need+=(chromium)
ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || need+=(postgresql)
if [ ${#need[@]} -gt 0 ]; then
  if [ "$(id -u)" = "0" ] && command -v apt-get >/dev/null; then
    echo "== installing from Debian: ${need[*]}"
    apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${need[@]}" >/dev/null
  else
    echo "Missing ${need[*]}. Install them (as root: apt-get install ${need[*]}) and run npm test again." >&2
    exit 1
  fi
fi

[ -d node_modules ] || npm ci

echo "== types"
npx react-router typegen >/dev/null
npx tsc --noEmit

echo "== dependency audit (production dependencies; policy in docs/security.md)"
node scripts/audit-deps.mjs

# Built once here: the vitest suites that start the real production server reuse it, and
# the end-to-end step below builds again (cheap) so it always tests the current tree.
echo "== production build"
npx react-router build >/dev/null

# Suites that measure decision latency or kill and restart servers run one file at a time
# after the rest, so that other test files do not compete with them for the two cores.
timed=(tests/unit/ingest-violations.test.ts tests/unit/soak-short.test.ts tests/unit/crash-restart.test.ts)
excludes=()
for f in "${timed[@]}"; do excludes+=(--exclude "$f"); done

echo "== unit and integration tests (vitest, PGlite)"
npx vitest run "${excludes[@]}"

echo "== load, fault and latency suites (one file at a time)"
npx vitest run --no-file-parallelism "${timed[@]}"

echo "== the same migrations and queries on a PostgreSQL server"
bash scripts/with-postgres.sh npx vitest run --config vitest.postgres.config.ts

echo "== end-to-end tests (production build, Chromium)"
npx react-router build >/dev/null
npx playwright test
