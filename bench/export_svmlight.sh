#!/usr/bin/env bash
# Benchmark of the SVMlight writer: writes ROWS x FEATURES synthetic rows
# through export.SVMlightWriter, then times sklearn's dump_svmlight_file on
# the same values and `cat file > /dev/null` of the file written, and prints
# the ratios.
#   ROWS (default 1000000), FEATURES (136), SK_ROWS (rows given to sklearn;
#   default ROWS; a smaller number is scaled up linearly), OUT_DIR.
set -euo pipefail
cd "$(dirname "$0")/.."

ROWS=${ROWS:-1000000}
FEATURES=${FEATURES:-136}
SK_ROWS=${SK_ROWS:-$ROWS}
PY=/usr/bin/python3
if [ -n "${OUT_DIR:-}" ]; then
	mkdir -p "$OUT_DIR"
	trap 'rm -f "$OUT_DIR"/go.svmlight "$OUT_DIR"/sk.svmlight' EXIT
else
	OUT_DIR=$(mktemp -d /tmp/svmlight-bench.XXXXXX)
	trap 'rm -rf "$OUT_DIR"' EXIT
fi
echo "machine load before: $(cut -d' ' -f1-3 /proc/loadavg) (other work on the machine skews every number)"

echo "== building"
go build -o "$OUT_DIR/exportbench" ./bench/exportbench

echo "== Go export.SVMlightWriter: $ROWS rows x $FEATURES features (value generation inside the timed loop)"
/usr/bin/time -f '%M %U %S' -o "$OUT_DIR/go.rss" \
	"$OUT_DIR/exportbench" -rows "$ROWS" -features "$FEATURES" -out "$OUT_DIR/go.svmlight" >"$OUT_DIR/go.json"
cat "$OUT_DIR/go.json"
read -r go_rss go_user go_sys <"$OUT_DIR/go.rss"
echo "peak RSS (time -f %M): $go_rss KiB; CPU: user $go_user s, sys $go_sys s"
echo "== the same rows made but not written (cost of the data source, included above)"
"$OUT_DIR/exportbench" -rows "$ROWS" -features "$FEATURES" -generate-only -out "$OUT_DIR/gen.empty" | tee "$OUT_DIR/gen.json"

echo "== cat of the file written (best of 3, page cache warm)"
best=0
for _ in 1 2 3; do
	s=$(date +%s%N)
	cat "$OUT_DIR/go.svmlight" >/dev/null
	e=$(date +%s%N)
	t=$((e - s))
	if [ "$best" = 0 ] || [ "$t" -lt "$best" ]; then best=$t; fi
done
best=$(printf '%d.%09d' $((best / 1000000000)) $((best % 1000000000)))
echo "cat seconds: $best"

# The same bytes written to a new file and flushed to disk: the floor for any program that
# produces this file, which the export (also written to disk) is compared with too.
echo "== cat of the file written into a new file, with sync"
sync
s=$(date +%s%N)
cat "$OUT_DIR/go.svmlight" >"$OUT_DIR/copy.svmlight" && sync
e=$(date +%s%N)
t=$((e - s))
catw=$(printf '%d.%09d' $((t / 1000000000)) $((t % 1000000000)))
rm -f "$OUT_DIR/copy.svmlight"
echo "cat-to-file seconds: $catw"

echo "== sklearn.datasets.dump_svmlight_file: $SK_ROWS rows (array generation timed apart, excluded)"
"$PY" bench/svmlight_reference.py "$SK_ROWS" "$FEATURES" "$OUT_DIR/sk.svmlight" >"$OUT_DIR/sk.json"
cat "$OUT_DIR/sk.json"

"$PY" - "$OUT_DIR/go.json" "$OUT_DIR/sk.json" "$best" "$go_rss" "$OUT_DIR/gen.json" "$go_user" "$go_sys" "$catw" <<'PYEOF'
import json, sys
go = json.load(open(sys.argv[1]))
gen = json.load(open(sys.argv[5]))
sk = json.load(open(sys.argv[2]))
cat_s = float(sys.argv[3])
rss_mb = int(sys.argv[4]) / 1024
sk_rows_per_s = sk["rows"] / sk["dump_seconds"]
sk_scaled = go["rows"] / sk_rows_per_s
print("== summary")
print(f"go:      {go['seconds']:.2f} s  {go['rows_per_sec']:,.0f} rows/s  {go['mb_per_sec']:.0f} MB/s  {go['bytes']/1e9:.2f} GB  peak RSS {rss_mb:.1f} MB")
print(f"sklearn: {sk['dump_seconds']:.2f} s for {sk['rows']} rows ({sk_rows_per_s:,.0f} rows/s; {sk_scaled:.1f} s for {go['rows']} rows)"
      f"; array generation {sk['generate_seconds']:.2f} s excluded")
print(f"data source alone: {gen['seconds']:.2f} s (inside the go time)")
print(f"cat:     {cat_s:.3f} s")
print(f"throughput vs sklearn: {go['rows_per_sec']/sk_rows_per_s:.2f}x  (goal >= 5x)")
print(f"time vs cat:           {go['seconds']/cat_s:.2f}x  (goal <= 3x; cat from page cache to /dev/null)")
catw = float(sys.argv[8])
print(f"time vs cat to a file:  {go['seconds']/catw:.2f}x  (cat into a new file plus sync: {catw:.2f} s)")
print(f"peak RSS:              {rss_mb:.1f} MB  (goal <= 150 MB)")
go_cpu = float(sys.argv[6]) + float(sys.argv[7])
sk_cpu_per_row = sk["dump_cpu_seconds"] / sk["rows"]
print(f"CPU seconds (less sensitive to other load): go {go_cpu:.2f} s, sklearn {sk_cpu_per_row*go['rows']:.2f} s for {go['rows']} rows"
      f" -> {sk_cpu_per_row*go['rows']/go_cpu:.2f}x less CPU")
PYEOF
