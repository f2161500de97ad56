#!/usr/bin/env bash
# Import benchmark, in one go: generates combined pair rows (default 20,000 queries × 50
# documents = 1,000,000 rows naming 500,000 documents), times `pertinent import rows` into a
# fresh database, times the sqlite3 shell's `.import --csv` of the same file into a bare
# table of a fresh database, and prints both, their ratio and peak RSS. A second reference:
# the shell loading the same file into pertinent's own schema (bench/import_schema.sql),
# which is what the schema's indexes and checks cost in native SQLite.
#   bash bench/import.sh            # QUERIES=2000 bash bench/import.sh for a quick run
set -euo pipefail
cd "$(dirname "$0")/.."
queries=${QUERIES:-20000}
per=${PER:-50}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
for tool in sqlite3 /usr/bin/time; do
  command -v "$tool" >/dev/null || { echo "needs $tool (Debian packages sqlite3 and time)" >&2; exit 1; }
done

go build -o "$work/pertinent" ./cmd/pertinent
go run ./bench/gen -queries "$queries" -per "$per" > "$work/rows.csv"
echo "input: $(($(wc -l < "$work/rows.csv") - 1)) rows, $(du -h "$work/rows.csv" | cut -f1)"

# A fresh installation with one project on the default 0-4 scale.
"$work/pertinent" migrate --db "$work/app.db" >/dev/null
sqlite3 "$work/app.db" "INSERT INTO projects(name, created_at) VALUES ('bench', '2026-01-01T00:00:00.000Z');
  INSERT INTO scale_levels(project_id, grade, label) SELECT 1, value, 'grade ' || value FROM generate_series(0, 4);"

cp "$work/app.db" "$work/schema.db" # the same empty project, for the second reference

cat "$work/rows.csv" > /dev/null # every run starts with the file in the page cache
/usr/bin/time -f "%e %M" -o "$work/app.time" \
  "$work/pertinent" import rows --db "$work/app.db" --project bench "$work/rows.csv"
/usr/bin/time -f "%e %M" -o "$work/shell.time" \
  sqlite3 "$work/shell.db" ".import --csv $work/rows.csv rows"

/usr/bin/time -f "%e %M" -o "$work/schema.time" \
  sqlite3 "$work/schema.db" -cmd "PRAGMA temp_store = MEMORY" -cmd ".import --csv --schema temp $work/rows.csv rows" < bench/import_schema.sql
[ "$(sqlite3 "$work/schema.db" "SELECT COUNT(*) FROM pairs")" = "$(sqlite3 "$work/app.db" "SELECT COUNT(*) FROM pairs")" ] ||
  { echo "the schema reference loaded a different number of pairs" >&2; exit 1; }

read -r app_s app_kb < "$work/app.time"
read -r sh_s sh_kb < "$work/shell.time"
read -r sc_s sc_kb < "$work/schema.time"
echo "pertinent import rows: ${app_s} s, peak RSS $((app_kb / 1024)) MB, database $(du -h "$work/app.db" | cut -f1)"
echo "sqlite3 .import --csv: ${sh_s} s, peak RSS $((sh_kb / 1024)) MB, database $(du -h "$work/shell.db" | cut -f1)"
echo "sqlite3 into pertinent's schema: ${sc_s} s, peak RSS $((sc_kb / 1024)) MB"
awk -v a="$app_s" -v s="$sh_s" -v c="$sc_s" 'BEGIN { printf "ratio: %.2fx the sqlite3 shell'"'"'s bare import (goal: 1.5x); %.2fx the shell loading the same schema\n", a / s, a / c }'
