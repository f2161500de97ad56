#!/usr/bin/env bash
# Planning benchmark, end to end: a project of 1,000 queries × 50 documents (bench/gen rows,
# imported), 20 run files of 1,000 queries × depth 100 (2,000,000 run lines; bench/gen -run),
# then `pertinent plan --dry-run` with a stratified design (depth 10, max depth 100, budget
# 50,000) timed three times with /usr/bin/time (Debian package `time`). The first timed run
# keeps the 20 runs (--dry-run stores no design, but the runs are kept); the later ones find
# them kept and compare their content. Prints wall time and peak RSS of each.
#   bash bench/plan.sh            # BIN=/path/to/pertinent to time another build
#   WORK=/tmp/planbench bash bench/plan.sh   # keep the files (and reuse them next time)
set -euo pipefail
cd "$(dirname "$0")/.."
command -v /usr/bin/time >/dev/null || { echo "needs /usr/bin/time (Debian package time)" >&2; exit 1; }
work=${WORK:-}
if [ -z "$work" ]; then
  work=$(mktemp -d)
  trap 'rm -rf "$work"' EXIT
fi
mkdir -p "$work/runs"
bin=${BIN:-$work/pertinent}
[ -n "${BIN:-}" ] || go build -o "$bin" ./cmd/pertinent
if [ ! -f "$work/runs/run19.txt" ]; then
  go build -o "$work/gen" ./bench/gen
  for r in $(seq 0 19); do
    "$work/gen" -queries 1000 -run "$r" -depth 100 > "$work/runs/run$(printf %02d "$r").txt"
  done
fi
if [ ! -f "$work/base.db" ]; then
  "$work/gen" -queries 1000 -per 50 > "$work/rows.csv"
  "$bin" project create --db "$work/base.db" --name bench >/dev/null
  "$bin" import rows --db "$work/base.db" --project bench "$work/rows.csv" >/dev/null
fi
echo "input: $(cat "$work"/runs/*.txt | wc -l) run lines in 20 files, $(du -ch "$work"/runs/*.txt | tail -1 | cut -f1)"
rm -f "$work/app.db"*
cp "$work/base.db" "$work/app.db"
cat "$work"/runs/*.txt > /dev/null # the files in the page cache
for i in 1 2 3; do
  /usr/bin/time -f "%e %M" -o "$work/plan.time" \
    "$bin" plan --db "$work/app.db" --project bench --design stratified --depth 10 --max-depth 100 \
    --budget 50000 --dry-run "$work"/runs/*.txt > "$work/plan$i.out"
  read -r s kb < "$work/plan.time"
  echo "plan --dry-run #$i: ${s} s, peak RSS $((kb / 1024)) MB ($(head -1 "$work/plan$i.out"))"
done
cmp -s "$work/plan1.out" "$work/plan3.out" || { echo "the runs' outputs differ" >&2; exit 1; }
