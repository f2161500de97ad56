# Sourced by the PostgreSQL benchmarks: pg_up DIR starts a throwaway cluster in DIR (initdb
# and pg_ctl from Debian's postgresql, a Unix socket in DIR, no TCP port) with PostgreSQL's
# own durable defaults (fsync and synchronous_commit on: every acknowledged commit is on
# disk), creates database "bench" and sets PG_DSN; pg_down DIR stops it. As root the cluster
# belongs to the postgres system account, since PostgreSQL refuses to run as root.
pg_bin() { ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -1; }
pg_as() {
  if [ "$(id -u)" -eq 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi
}
pg_up() {
  local dir=$1 bin
  bin=$(pg_bin)
  [ -x "$bin/initdb" ] || { echo "needs PostgreSQL (Debian package postgresql)" >&2; return 1; }
  mkdir -p "$dir"
  [ "$(id -u)" -eq 0 ] && chown postgres "$dir"
  pg_as "$bin/initdb" -D "$dir/data" -U pertinent --auth=trust --encoding=UTF8 --no-locale >/dev/null
  printf "\nlisten_addresses = ''\nunix_socket_directories = '%s'\nshared_buffers = 256MB\nmax_connections = 300\n" "$dir" >> "$dir/data/postgresql.conf"
  pg_as "$bin/pg_ctl" -D "$dir/data" -l "$dir/server.log" -w -s start
  pg_as "$bin/createdb" -h "$dir" -U pertinent bench
  PG_DSN="postgres://pertinent@/bench?host=$dir"
  PG_BIN=$bin
  export PG_DSN PG_BIN
}
pg_down() { pg_as "$(pg_bin)/pg_ctl" -D "$1/data" -w -s -m fast stop || true; }
