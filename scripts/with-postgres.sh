#!/usr/bin/env bash
# Starts a throwaway PostgreSQL server from Debian's package on a loopback port, runs the
# given command with TILLER_TEST_DATABASE_URL pointing at it, and removes the server.
set -euo pipefail
bin=$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)
port=${TILLER_TEST_PG_PORT:-55432}
dir=$(mktemp -d /tmp/tiller-pg.XXXXXX)
as_pg() { if [ "$(id -u)" = "0" ]; then runuser -u postgres -- "$@"; else "$@"; fi; }
[ "$(id -u)" = "0" ] && chown postgres "$dir"
cleanup() { as_pg "$bin/pg_ctl" -D "$dir/data" -m immediate stop >/dev/null 2>&1 || true; rm -rf "$dir"; }
trap cleanup EXIT
as_pg "$bin/initdb" -D "$dir/data" -A trust -U tiller >/dev/null
as_pg "$bin/pg_ctl" -D "$dir/data" -o "-p $port -k $dir -c listen_addresses=127.0.0.1" -l "$dir/log" -w start >/dev/null
as_pg "$bin/createdb" -h 127.0.0.1 -p "$port" -U tiller tiller_test
TILLER_TEST_DATABASE_URL="postgres://tiller@127.0.0.1:$port/tiller_test" "$@"
