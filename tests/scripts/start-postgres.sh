#!/usr/bin/env bash
# Starts a throwaway PostgreSQL server on 127.0.0.1 for the grouping-store tests and prints the line
#   export TOPICGROUPS_TEST_POSTGRES='Host=127.0.0.1;Port=55432;Username=postgres;Database=topicgroups_test'
# for `eval "$(bash tests/scripts/start-postgres.sh)"`. Everything else goes to stderr.
# Idempotent: installs Debian's postgresql package when no server binaries are found (root only), makes the
# data folder once, and reuses a server already running on the port. `start-postgres.sh stop` stops it.
# The server listens on loopback only and trusts local connections: it is for tests, never for data.
# Settings: TOPICGROUPS_PG_PORT (default 55432), TOPICGROUPS_PG_DATA (default /tmp/topicgroups-pg).
set -euo pipefail

port=${TOPICGROUPS_PG_PORT:-55432}
data=${TOPICGROUPS_PG_DATA:-/tmp/topicgroups-pg}
database=topicgroups_test

find_bin() { ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1; }

# Runs a server binary as the data folder's owner: PostgreSQL refuses to run as root.
as_owner() {
  if [ "$(id -u)" -eq 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi
}

bin=$(find_bin)
if [ "${1:-}" = "stop" ]; then
  if [ -n "$bin" ] && [ -f "$data/postmaster.pid" ]; then
    as_owner "$bin/pg_ctl" -D "$data" -m fast -w stop >&2 || true
  fi
  exit 0
fi

if [ -z "$bin" ]; then
  if [ "$(id -u)" -ne 0 ]; then
    echo "start-postgres.sh: PostgreSQL is not installed; run as root or: sudo apt-get install -y postgresql" >&2
    exit 1
  fi
  echo "start-postgres.sh: installing Debian's postgresql package" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq >&2
  apt-get install -y -qq postgresql >&2
  bin=$(find_bin)
fi

if ! "$bin/pg_isready" -q -h 127.0.0.1 -p "$port"; then
  if [ ! -f "$data/PG_VERSION" ]; then
    mkdir -p "$data"
    if [ "$(id -u)" -eq 0 ]; then chown postgres:postgres "$data"; fi
    chmod 700 "$data"
    as_owner "$bin/initdb" -D "$data" -U postgres --auth=trust -E UTF8 --no-locale >&2
  fi
  # Loopback only; the socket goes into the data folder so no system folder is needed.
  as_owner "$bin/pg_ctl" -D "$data" -l "$data/server.log" -w -t 60 \
    -o "-c listen_addresses=127.0.0.1 -p $port -k $data -c fsync=on" start >&2
fi

if ! "$bin/psql" -h 127.0.0.1 -p "$port" -U postgres -d postgres -tAc "SELECT 1 FROM pg_database WHERE datname = '$database'" | grep -q 1; then
  "$bin/psql" -h 127.0.0.1 -p "$port" -U postgres -d postgres -qc "CREATE DATABASE $database" >&2
fi

echo "export TOPICGROUPS_TEST_POSTGRES='Host=127.0.0.1;Port=$port;Username=postgres;Database=$database'"
