#!/usr/bin/env bash
# A throwaway PostgreSQL server for the API tests, on 127.0.0.1 only.
#
#   eval "$(.ci/postgres.sh start)"   start (or reuse) it; prints `export SIGHTLINE_TEST_DATABASE_URL=…`
#   .ci/postgres.sh env               print that line again for a running server
#   .ci/postgres.sh status            say whether it runs
#   .ci/postgres.sh stop              stop it (its files stay, `start` reuses them)
#   .ci/postgres.sh clean             stop it and delete its files
#
# Only the export line goes to stdout; messages go to stderr. The cluster is made with initdb in
# SIGHTLINE_PG_DIR (default /tmp/sightline-pg-<uid>), never in the system's clusters. As root it
# runs as the `postgres` system user (PostgreSQL refuses root); otherwise as the current user.
# The role `sightline` (LOGIN CREATEDB, random password) owns the database `sightline`.
#
# Settings (environment): SIGHTLINE_PG_DIR, SIGHTLINE_PG_PORT (default: first free of
# 54329–54348, then 5432), SIGHTLINE_PG_BINDIR (default: newest /usr/lib/postgresql/*/bin),
# SIGHTLINE_PG_TIMEOUT (seconds to wait for readiness, default 60).
set -euo pipefail

base="${SIGHTLINE_PG_DIR:-${TMPDIR:-/tmp}/sightline-pg-$(id -u)}"
data="$base/data"
sockdir="$base/run"
logfile="$base/server.log"
timeout="${SIGHTLINE_PG_TIMEOUT:-60}"

say() { printf 'postgres.sh: %s\n' "$*" >&2; }
die() {
  say "error: $*"
  exit 1
}

# The PostgreSQL programs: Debian's newest /usr/lib/postgresql/<version>/bin, else pg_config's, else PATH.
find_bindir() {
  if [ -n "${SIGHTLINE_PG_BINDIR:-}" ]; then
    [ -x "$SIGHTLINE_PG_BINDIR/initdb" ] || die "no initdb in SIGHTLINE_PG_BINDIR=$SIGHTLINE_PG_BINDIR"
    printf '%s\n' "$SIGHTLINE_PG_BINDIR"
    return
  fi
  local d newest
  # Newest by version (a glob sorts 10 before 9).
  newest="$(for d in /usr/lib/postgresql/*/bin; do
    if [ -x "$d/initdb" ] && [ -x "$d/pg_ctl" ]; then printf '%s\n' "$d"; fi
  done | sort -V | tail -n 1)"
  if [ -n "$newest" ]; then
    printf '%s\n' "$newest"
    return
  fi
  if command -v pg_config >/dev/null 2>&1 && d="$(pg_config --bindir 2>/dev/null)" && [ -x "$d/initdb" ]; then
    printf '%s\n' "$d"
    return
  fi
  if d="$(command -v initdb 2>/dev/null)"; then
    dirname "$d"
    return
  fi
  die "PostgreSQL is not installed (no initdb); on Debian: apt-get install postgresql"
}

# The server's user: `postgres` when we are root, else ourselves.
if [ "$(id -u)" -eq 0 ]; then
  server_user=postgres
  id -u "$server_user" >/dev/null 2>&1 || die "running as root but there is no 'postgres' user to run the server"
else
  server_user="$(id -un 2>/dev/null || id -u)"
fi

# Run a command as the server's user, from / (root's home is not readable by postgres).
as_server() {
  if [ "$(id -u)" -ne 0 ]; then
    (cd / && "$@")
  elif command -v runuser >/dev/null 2>&1; then
    (cd / && runuser -u "$server_user" -- "$@")
  else
    (cd / && su -s /bin/sh "$server_user" -c "$(printf '%q ' "$@")")
  fi
}

port_in_use() { (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null; }

choose_port() {
  local p
  if [ -n "${SIGHTLINE_PG_PORT:-}" ]; then
    port_in_use "$SIGHTLINE_PG_PORT" && die "port $SIGHTLINE_PG_PORT on 127.0.0.1 is taken (SIGHTLINE_PG_PORT)"
    printf '%s\n' "$SIGHTLINE_PG_PORT"
    return
  fi
  # Reuse the previous port of this cluster when free, so the URL stays the same.
  if [ -s "$base/port" ] && ! port_in_use "$(cat "$base/port")"; then
    cat "$base/port"
    return
  fi
  for p in $(seq 54329 54348) 5432; do
    if ! port_in_use "$p"; then
      printf '%s\n' "$p"
      return
    fi
  done
  die "no free port among 54329–54348 and 5432 on 127.0.0.1; set SIGHTLINE_PG_PORT"
}

is_running() { [ -f "$data/PG_VERSION" ] && as_server "$bindir/pg_ctl" -D "$data" status >/dev/null 2>&1; }

print_env() {
  [ -s "$base/port" ] && [ -s "$base/password" ] || die "no server state in $base; run: $0 start"
  printf "export SIGHTLINE_TEST_DATABASE_URL='postgres://sightline:%s@127.0.0.1:%s/sightline'\n" \
    "$(cat "$base/password")" "$(cat "$base/port")"
}

wait_ready() {
  local port="$1" waited=0
  until "$bindir/pg_isready" -q -h 127.0.0.1 -p "$port" -d postgres -t 2; do
    if [ "$waited" -ge "$timeout" ] || ! is_running; then # (called once the server has started)
      say "PostgreSQL did not become ready on 127.0.0.1:$port within ${waited}s; last lines of $logfile:"
      tail -n 30 "$logfile" >&2 2>/dev/null || true
      as_server "$bindir/pg_ctl" -D "$data" stop -m immediate >/dev/null 2>&1 || true
      die "PostgreSQL failed to start"
    fi
    sleep 1
    waited=$((waited + 1))
  done
}

init_cluster() {
  say "creating a cluster in $data with $bindir/initdb (server user: $server_user)"
  mkdir -p "$base"
  chmod 755 "$base" # the server's user must reach data/ and run/
  rm -rf "$data" "$sockdir"
  mkdir -p "$data" "$sockdir"
  chmod 700 "$data" "$sockdir"
  if [ "$(id -u)" -eq 0 ]; then chown "$server_user" "$data" "$sockdir"; fi
  # Superuser `postgres`; trust on the Unix socket (its directory is private to the server's
  # user), passwords (SCRAM) over TCP.
  # Locale C (byte-order collation, the same on every machine), UTF-8 text.
  as_server "$bindir/initdb" -D "$data" -U postgres -E UTF8 --locale=C \
    --auth-local=trust --auth-host=scram-sha-256 >"$base/initdb.log" 2>&1 ||
    {
      cat "$base/initdb.log" >&2
      die "initdb failed"
    }
  # Loopback only; fast and disposable (test data need no durability); room for parallel test
  # servers (each pools up to 10 connections).
  as_server sh -c "cat >> '$data/postgresql.conf'" <<EOF

# sightline test server (.ci/postgres.sh)
listen_addresses = '127.0.0.1'
unix_socket_directories = '$sockdir'
max_connections = 300
fsync = off
synchronous_commit = off
full_page_writes = off
EOF
}

start_server() {
  # Unix socket paths are limited to 107 bytes.
  [ "${#sockdir}" -le 90 ] || die "SIGHTLINE_PG_DIR is too long for a Unix socket path: $base"
  [ -f "$data/PG_VERSION" ] || init_cluster
  local have want
  have="$(cat "$data/PG_VERSION")"
  want="$("$bindir/pg_ctl" --version | sed -E 's/^[^0-9]*([0-9]+).*/\1/')"
  [ "$have" = "$want" ] ||
    die "$data was made by PostgreSQL $have but $bindir is $want; run: $0 clean"
  [ -s "$base/password" ] || {
    (umask 077 && od -An -N16 -tx1 /dev/urandom | tr -d ' \n' >"$base/password")
  }
  port="$(choose_port)"
  printf '%s\n' "$port" >"$base/port"
  if [ "$(id -u)" -eq 0 ]; then
    touch "$logfile"
    chown "$server_user" "$logfile"
  fi
  say "starting PostgreSQL ($("$bindir/postgres" --version)) on 127.0.0.1:$port, log $logfile"
  # pg_ctl -w returns once the server accepts connections, or fails early if it exits.
  as_server "$bindir/pg_ctl" -D "$data" -l "$logfile" -o "-p $port" -w -t "$timeout" start >/dev/null ||
    {
      say "pg_ctl could not start PostgreSQL on 127.0.0.1:$port; last lines of $logfile:"
      tail -n 30 "$logfile" >&2 2>/dev/null || true
      as_server "$bindir/pg_ctl" -D "$data" stop -m immediate >/dev/null 2>&1 || true
      die "PostgreSQL failed to start"
    }
  wait_ready "$port"
}

cmd_start() {
  bindir="$(find_bindir)"
  local port
  if is_running; then
    say "already running ($data)"
    port="$(cat "$base/port")"
    wait_ready "$port"
  else
    start_server
  fi
  # The test role and its database (idempotent); the SQL goes on stdin, not the command line.
  as_server "$bindir/psql" -X -q -v ON_ERROR_STOP=1 -h "$sockdir" -p "$port" -U postgres -d postgres \
    >/dev/null <<EOF || die "could not create the role or database sightline"
SELECT 'CREATE ROLE sightline' WHERE NOT EXISTS (SELECT FROM pg_roles WHERE rolname = 'sightline') \gexec
ALTER ROLE sightline WITH LOGIN CREATEDB PASSWORD '$(cat "$base/password")';
SELECT 'CREATE DATABASE sightline OWNER sightline' WHERE NOT EXISTS (SELECT FROM pg_database WHERE datname = 'sightline') \gexec
EOF
  say "ready: role sightline, database sightline on 127.0.0.1:$port"
  print_env
}

cmd_stop() {
  bindir="$(find_bindir)"
  if is_running; then
    as_server "$bindir/pg_ctl" -D "$data" stop -m fast -w -t "$timeout" >/dev/null ||
      die "pg_ctl stop failed"
    say "stopped ($data)"
  else
    say "not running ($data)"
  fi
}

case "${1:-}" in
  start) cmd_start ;;
  stop) cmd_stop ;;
  clean)
    cmd_stop
    rm -rf "$base"
    say "removed $base"
    ;;
  env)
    bindir="$(find_bindir)"
    is_running || die "not running; run: $0 start"
    print_env
    ;;
  status)
    bindir="$(find_bindir)"
    if is_running; then
      say "running on 127.0.0.1:$(cat "$base/port") ($data)"
    else
      say "not running ($data)"
      exit 3
    fi
    ;;
  *)
    echo "usage: $0 start|stop|clean|env|status   (eval \"\$($0 start)\" exports SIGHTLINE_TEST_DATABASE_URL)" >&2
    exit 2
    ;;
esac
