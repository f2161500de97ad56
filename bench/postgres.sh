#!/usr/bin/env bash
# PostgreSQL benchmarks, in one run on one throwaway cluster (bench/pgcluster.sh: durable
# defaults, a Unix socket, no port):
#  1. import: `pertinent import rows` of 1,000,000 combined rows (bench/gen; 20,000 queries ×
#     50 documents) into a fresh PostgreSQL database, beside psql loading the same file with
#     \copy into the same schema (bench/import_schema_postgres.sql) in another; then the same
#     1,000,000 pairs as a pairs file (`pertinent import pairs`) into databases holding the
#     queries and documents, beside psql's \copy (bench/import_pairs_postgres.sql); goal 1.5x.
#  2. judging: `pertinent loadtest` against one instance on SQLite, one on PostgreSQL and two
#     on one PostgreSQL database, each beside its ceiling measured in the same run (SQLite's
#     raw commit rate; pgbench's single-row insert transactions on the cluster).
#  3. with DESK=1: the lead's desk at 1,000,000 judgments on PostgreSQL (the LeadPages
#     benchmark of web/, which builds the judgments the first time: several minutes).
#   bash bench/postgres.sh    # QUERIES=2000 ASSESSORS=50 DURATION=5s for a quick run
set -euo pipefail
cd "$(dirname "$0")/.."
queries=${QUERIES:-20000}
per=${PER:-50}
assessors=${ASSESSORS:-200}
duration=${DURATION:-10s}
work=$(mktemp -d /tmp/pgbench.XXXXXX)
chmod 755 "$work"
# shellcheck source=bench/pgcluster.sh
source bench/pgcluster.sh
trap 'pg_down "$work/pg"; rm -rf "$work"' EXIT
command -v /usr/bin/time >/dev/null || { echo "needs /usr/bin/time (Debian package time)" >&2; exit 1; }
pg_up "$work/pg"
psql() { "$PG_BIN/psql" -X -q -v ON_ERROR_STOP=1 -h "$work/pg" -U pertinent "$@"; }
dsn() { echo "postgres://pertinent@/$1?host=$work/pg"; }
project_sql="INSERT INTO projects(name, created_at) VALUES ('bench', '2026-01-01T00:00:00.000Z');
  INSERT INTO scale_levels(project_id, grade, label) SELECT 1, g, 'grade ' || g FROM generate_series(0, 4) g;"

go build -o "$work/pertinent" ./cmd/pertinent
go run ./bench/gen -queries "$queries" -per "$per" > "$work/rows.csv"
chmod 644 "$work/rows.csv"
echo "input: $(($(wc -l < "$work/rows.csv") - 1)) rows, $(du -h "$work/rows.csv" | cut -f1)"

# newdb DB: a new database at pertinent's latest schema, holding the bench project.
newdb() {
  psql -d bench -c "CREATE DATABASE $1"
  "$work/pertinent" migrate --db "$(dsn "$1")" >/dev/null
  psql -d "$1" -c "$project_sql"
}
newdb app
newdb ref
# vs KIND APP REF FILE SQL: `pertinent import KIND FILE` into database APP beside psql running
# SQL on FILE into database REF, a checkpoint before each side so neither pays for flushing
# the other's writes; both must end with the same number of pairs.
vs() {
  local kind=$1 app=$2 ref=$3 file=$4 sql=$5 app_s app_kb ref_s
  cat "$file" > /dev/null
  psql -d bench -c CHECKPOINT
  /usr/bin/time -f "%e %M" -o "$work/$app.time" "$work/pertinent" import "$kind" --db "$(dsn "$app")" --project bench "$file" >/dev/null
  psql -d bench -c CHECKPOINT
  /usr/bin/time -f "%e %M" -o "$work/$ref.time" "$PG_BIN/psql" -X -q -v ON_ERROR_STOP=1 -h "$work/pg" -U pertinent \
    -d "$ref" -f "$sql" < "$file"
  [ "$(psql -d "$app" -Atc 'SELECT COUNT(*) FROM pairs')" = "$(psql -d "$ref" -Atc 'SELECT COUNT(*) FROM pairs')" ] ||
    { echo "the $kind reference loaded a different number of pairs" >&2; exit 1; }
  read -r app_s app_kb < "$work/$app.time"
  read -r ref_s _ < "$work/$ref.time"
  echo "pertinent import $kind into PostgreSQL: ${app_s} s, peak RSS $((app_kb / 1024)) MB"
  echo "psql \\copy and SQL into the same schema: ${ref_s} s"
  awk -v k="$kind" -v a="$app_s" -v r="$ref_s" 'BEGIN { printf "%s import ratio: %.2fx psql'"'"'s COPY into the same schema (goal: 1.5x)\n", k, a / r }'
}
vs rows app ref "$work/rows.csv" bench/import_schema_postgres.sql

# The same pairs alone, as a pairs file, into databases holding the queries and documents.
go run ./bench/gen -queries "$queries" -per "$per" -pairs > "$work/pairs.csv"
chmod 644 "$work/pairs.csv"
for db in papp pref; do
  newdb "$db"
  psql -d "$db" -f bench/import_pairs_setup_postgres.sql < "$work/rows.csv"
done
vs pairs papp pref "$work/pairs.csv" bench/import_pairs_postgres.sql

lt() { "$work/pertinent" loadtest --assessors "$assessors" --pairs 20000 --duration "$duration" "$@" | grep -E '^(summary|pgbench|raw)'; }
psql -d bench -c "CREATE DATABASE judging"
echo "-- one instance on SQLite"
lt --db "$work/judging.db" | tee "$work/lt-sqlite.txt"
echo "-- one instance on PostgreSQL"
lt --db "$(dsn judging)" | tee "$work/lt-pg1.txt"
echo "-- two instances on one PostgreSQL database"
lt --db "$(dsn judging)" --instances 2 | tee "$work/lt-pg2.txt"
rate() { grep -o '[0-9]* judgments/s' "$1" | cut -d' ' -f1; }
awk -v s="$(rate "$work/lt-sqlite.txt")" -v p="$(rate "$work/lt-pg1.txt")" -v q="$(rate "$work/lt-pg2.txt")" \
  'BEGIN { printf "judging: PostgreSQL one instance %.2fx SQLite; two instances %.2fx one\n", p / s, q / p }'

if [ "${DESK:-0}" = 1 ]; then
  psql -d bench -c "CREATE DATABASE desk"
  PERTINENT_BENCH_DB="$(dsn desk)" go test ./web/ -run XXX -bench LeadPages -benchtime 3x -timeout 60m -v | grep -E 'Benchmark|first view'
fi
