#!/usr/bin/env bash
# A throwaway PostgreSQL/PostGIS server for the database tests
# (docs/testing.md, "Database tests"), one per DIR (a folder of the build
# tree, where its connection options are written to DIR/conninfo). Its data
# folder, Unix socket and log live in a folder of its own under $TMPDIR
# (default /tmp; short enough for a socket path, and reachable by the
# `postgres` system user, whom the server runs as when started by root: it
# refuses to run as root). It listens on that socket only (no TCP port), so
# servers of several build trees do not collide.
#   scripts/pg-server.sh start DIR    initialise and start; prints the
#                                     connection options (libpq keywords)
#   scripts/pg-server.sh stop DIR     stop it (fast shutdown) and delete its folder
#   scripts/pg-server.sh conninfo DIR print the connection options
# The tests then create and drop their own databases, with the postgis
# extension. To point them at another server instead, set
# REACHWISE_TEST_PG to its libpq connection options (for a role that may
# create databases, on a server with PostGIS installed).
set -euo pipefail
action="${1:?usage: pg-server.sh start|stop|conninfo DIR}"
dir="${2:?usage: pg-server.sh start|stop|conninfo DIR}"
mkdir -p "$dir"
dir="$(cd "$dir" && pwd)"

as_owner=()
owner="$(id -un)"
if [[ $(id -u) -eq 0 ]]; then
  as_owner=(runuser -u postgres --)
  owner=postgres
fi
srv="${TMPDIR:-/tmp}/reachwise-pg-$(printf %s "$dir" | md5sum | cut -c1-12)"
conninfo="host=$srv user=$owner dbname=postgres"
if [[ -n ${REACHWISE_TEST_PG:-} ]]; then
  # Another server: only check that it answers and has PostGIS.
  case "$action" in
    start)
      if ! psql "$REACHWISE_TEST_PG" -XAtqc "select 1 from pg_available_extensions where name = 'postgis'" | grep -q 1; then
        echo "pg-server: the server of REACHWISE_TEST_PG ($REACHWISE_TEST_PG) does not answer or has no PostGIS" >&2
        exit 1
      fi
      echo "$REACHWISE_TEST_PG" ;;
    *) echo "$REACHWISE_TEST_PG" ;;
  esac
  exit 0
fi

bindir=""
for d in $(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V -r); do
  if [[ -x $d/pg_ctl && -x $d/initdb ]]; then bindir="$d"; break; fi
done
if [[ -z $bindir ]]; then
  echo "pg-server: no PostgreSQL server found (Debian: apt-get install postgresql postgresql-NN-postgis-3; scripts/setup.sh installs them)" >&2
  exit 1
fi

case "$action" in
  conninfo) echo "$conninfo" ;;
  start)
    mkdir -p -m 700 "$srv"
    if [[ $owner == postgres ]]; then chown postgres: "$srv"; fi
    if [[ ! -s $srv/data/PG_VERSION ]]; then
      "${as_owner[@]}" "$bindir/initdb" -D "$srv/data" -A trust -U "$owner" -E UTF8 --locale=C.UTF-8 >"$srv/initdb.log" 2>&1 ||
        { echo "pg-server: initdb failed (log: $srv/initdb.log)" >&2; cat "$srv/initdb.log" >&2; exit 1; }
    fi
    if ! "${as_owner[@]}" "$bindir/pg_ctl" -D "$srv/data" status >/dev/null 2>&1; then
      # fsync off: a test server's data need not survive a power cut.
      "${as_owner[@]}" "$bindir/pg_ctl" -D "$srv/data" -l "$srv/server.log" -w -t 60 \
        -o "-c listen_addresses='' -c unix_socket_directories='$srv' -c fsync=off -c max_connections=50" start >/dev/null ||
        { echo "pg-server: the server did not start (log: $srv/server.log)" >&2; tail -20 "$srv/server.log" >&2; exit 1; }
    fi
    if ! psql "$conninfo" -XAtqc "select 1 from pg_available_extensions where name = 'postgis'" | grep -q 1; then
      echo "pg-server: the server has no PostGIS extension (Debian: apt-get install postgresql-NN-postgis-3)" >&2
      exit 1
    fi
    echo "$conninfo" > "$dir/conninfo"
    echo "$conninfo"
    ;;
  stop)
    if [[ -s $srv/data/PG_VERSION ]]; then
      "${as_owner[@]}" "$bindir/pg_ctl" -D "$srv/data" -m fast -w stop >/dev/null 2>&1 || true
    fi
    rm -rf "$srv" "$dir/conninfo"
    ;;
  *) echo "pg-server: unknown action $action" >&2; exit 2 ;;
esac
