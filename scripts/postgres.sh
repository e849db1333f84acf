#!/usr/bin/env bash
# A throwaway PostgreSQL 15 cluster for tests and benchmarks, on 127.0.0.1 only.
#
#   scripts/postgres.sh start   # prints the DATABASE_URL on stdout (messages go to stderr)
#   scripts/postgres.sh url     # prints it again while the cluster runs
#   scripts/postgres.sh stop    # stops the server and deletes the cluster
#
# The cluster lives in a new temporary folder, owned by the `postgres` user when this runs as root (the
# server refuses to run as root), trusts every connection (it listens on the loopback address only, on a
# port that was free) and trades durability for speed: it is for tests, never for data you want to keep.
# Where its folder is, is kept in var/postgres-cluster so that `stop` finds it.
set -euo pipefail
cd "$(dirname "$0")/.."
state="var/postgres-cluster"

say() { echo "postgres.sh: $*" >&2; }

find_bin() {
  local dir
  for dir in "${EARSHOT_PG_BIN:-}" /usr/lib/postgresql/15/bin; do
    if [ -n "$dir" ] && [ -x "$dir/pg_ctl" ] && [ -x "$dir/initdb" ]; then
      echo "$dir"
      return 0
    fi
  done
  if command -v pg_ctl >/dev/null 2>&1 && command -v initdb >/dev/null 2>&1; then
    dirname "$(command -v pg_ctl)"
    return 0
  fi
  say "PostgreSQL's initdb and pg_ctl were not found (looked in \$EARSHOT_PG_BIN, /usr/lib/postgresql/15/bin, PATH)."
  say "Install PostgreSQL 15 (Debian: apt-get install postgresql-15) or point EARSHOT_PG_BIN at its bin folder."
  exit 1
}

# Runs a PostgreSQL program as the cluster's owner: `postgres` when we are root, ourselves otherwise.
as_owner() {
  if [ "$(id -u)" = 0 ]; then
    runuser -u postgres -- "$@"
  else
    "$@"
  fi
}

spare_port() {
  local python
  python=$(command -v python3 || command -v python)
  "$python" -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])'
}

url_of() {  # folder → URL
  echo "postgres://postgres@127.0.0.1:$(cat "$1/port")/earshot"
}

start() {
  if [ -f "$state" ] && [ -d "$(cat "$state")" ]; then
    say "a cluster is already running in $(cat "$state") ($(url_of "$(cat "$state")")); run '$0 stop' first"
    exit 1
  fi
  local bin dir port attempt
  bin=$(find_bin)
  if [ "$(id -u)" = 0 ] && ! id postgres >/dev/null 2>&1; then
    say "running as root needs a 'postgres' user to own the cluster (the server refuses to run as root);"
    say "Debian's postgresql package creates it, or: useradd --system --home /var/lib/postgresql postgres"
    exit 1
  fi
  dir=$(mktemp -d "${TMPDIR:-/tmp}/earshot-pg.XXXXXX")
  chmod 700 "$dir"
  [ "$(id -u)" = 0 ] && chown postgres: "$dir"
  mkdir -p var
  echo "$dir" >"$state"
  if ! as_owner "$bin/initdb" -D "$dir/data" -U postgres -A trust -E UTF8 --no-locale --no-sync >"$dir/initdb.log" 2>&1; then
    say "initdb failed:"; cat "$dir/initdb.log" >&2
    stop_cluster
    exit 1
  fi
  for attempt in 1 2 3; do
    port=$(spare_port)
    if as_owner "$bin/pg_ctl" -D "$dir/data" -l "$dir/data/server.log" -w -t 60 start -o \
        "-c listen_addresses=127.0.0.1 -p $port -c unix_socket_directories=$dir -c fsync=off \
         -c synchronous_commit=off -c full_page_writes=off -c max_connections=120" >/dev/null; then
      echo "$port" | as_owner tee "$dir/port" >/dev/null
      as_owner "$bin/psql" -q -h 127.0.0.1 -p "$port" -U postgres -d postgres -v ON_ERROR_STOP=1 \
        -c "CREATE DATABASE earshot" >/dev/null
      say "PostgreSQL $("$bin/pg_ctl" --version | awk '{print $3}') running in $dir on 127.0.0.1:$port"
      url_of "$dir"
      return 0
    fi
    say "the server did not start on port $port (attempt $attempt):"
    tail -5 "$dir/data/server.log" >&2 || true
  done
  stop_cluster
  exit 1
}

stop_cluster() {
  local dir bin pid
  if [ ! -f "$state" ]; then
    say "no cluster to stop"
    return 0
  fi
  dir=$(cat "$state")
  case "$dir" in
    */earshot-pg.*) ;;
    *) say "refusing to delete $dir: not a folder this script made"; exit 1 ;;
  esac
  if [ -f "$dir/data/postmaster.pid" ]; then
    bin=$(find_bin)
    if ! as_owner "$bin/pg_ctl" -D "$dir/data" -m fast -w -t 30 stop >/dev/null 2>&1; then
      pid=$(head -1 "$dir/data/postmaster.pid" 2>/dev/null || true)
      if [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null; then
        say "pg_ctl stop failed; sending SIGQUIT to the server ($pid)"
        kill -QUIT "$pid" 2>/dev/null || true
        sleep 2
      fi
    fi
  fi
  rm -rf "$dir"
  rm -f "$state"
  say "stopped; removed $dir"
}

case "${1:-}" in
  start) start ;;
  stop) stop_cluster ;;
  url)
    if [ -f "$state" ] && [ -f "$(cat "$state")/port" ]; then url_of "$(cat "$state")"; else say "not running"; exit 1; fi ;;
  *) echo "usage: $0 start|stop|url" >&2; exit 2 ;;
esac
