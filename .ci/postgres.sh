#!/usr/bin/env bash
# A throwaway PostgreSQL cluster for the SQL source tests, sourced by .ci/run:
#   verify_pg_start   installs the server from the distribution's packages where missing (as
#                     root), creates a cluster in a temporary folder as a non-root user (initdb
#                     refuses root), starts it on a Unix socket in that folder (no TCP port) and
#                     exports VERIFY_TEST_POSTGRES_URL for the tests
#   verify_pg_stop    stops it and removes the folder
# Without a server the PostgreSQL tests skip and say so.

verify_pg_bin() {
  local d found=""
  for d in /usr/lib/postgresql/*/bin; do
    [ -x "$d/initdb" ] && [ -x "$d/pg_ctl" ] && found="$d"
  done
  if [ -z "$found" ] && command -v initdb >/dev/null 2>&1 && command -v pg_ctl >/dev/null 2>&1; then
    found="$(dirname "$(command -v initdb)")"
  fi
  printf '%s' "$found"
}

verify_pg_start() {
  local bin user
  bin="$(verify_pg_bin)"
  if [ -z "$bin" ] && command -v apt-get >/dev/null 2>&1 && [ "$(id -u)" = "0" ]; then
    echo "ci: installing PostgreSQL (postgresql) for the SQL source tests"
    (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq \
      --no-install-recommends postgresql >/dev/null) \
      || echo "ci: WARNING: PostgreSQL could not be installed; the PostgreSQL tests will skip"
    bin="$(verify_pg_bin)"
  fi
  if [ -z "$bin" ]; then
    echo "ci: WARNING: no PostgreSQL server here; the PostgreSQL tests will skip"
    return 0
  fi
  VERIFY_PG_DIR="$(mktemp -d /tmp/verify-pg.XXXXXX)"
  export VERIFY_PG_DIR
  if [ "$(id -u)" = "0" ]; then
    user=nobody
    chown "$user" "$VERIFY_PG_DIR"
    VERIFY_PG_AS=(runuser -u "$user" --)
  else
    user="$(id -un)"
    VERIFY_PG_AS=()
  fi
  chmod 700 "$VERIFY_PG_DIR"
  if "${VERIFY_PG_AS[@]}" "$bin/initdb" -D "$VERIFY_PG_DIR/data" -U "$user" -A trust \
        >"$VERIFY_PG_DIR/initdb.log" 2>&1 \
     && "${VERIFY_PG_AS[@]}" "$bin/pg_ctl" -D "$VERIFY_PG_DIR/data" -l "$VERIFY_PG_DIR/server.log" \
        -o "-k $VERIFY_PG_DIR -c listen_addresses=''" -w -t 60 start >/dev/null; then
    export VERIFY_TEST_POSTGRES_URL="postgresql+psycopg://$user@/postgres?host=$VERIFY_PG_DIR"
    VERIFY_PG_CTL="$bin/pg_ctl"
    echo "ci: PostgreSQL $("$bin/pg_ctl" --version | awk '{print $3}') running on socket $VERIFY_PG_DIR"
  else
    echo "ci: WARNING: the PostgreSQL cluster did not start; the PostgreSQL tests will skip"
    cat "$VERIFY_PG_DIR/initdb.log" "$VERIFY_PG_DIR/server.log" 2>/dev/null | tail -20
  fi
}

verify_pg_stop() {
  if [ -n "${VERIFY_PG_CTL:-}" ]; then
    "${VERIFY_PG_AS[@]}" "$VERIFY_PG_CTL" -D "$VERIFY_PG_DIR/data" -m fast -w stop >/dev/null 2>&1 || true
  fi
  if [ -n "${VERIFY_PG_DIR:-}" ]; then
    rm -rf "$VERIFY_PG_DIR"
  fi
}
