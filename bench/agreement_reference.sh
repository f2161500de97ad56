#!/usr/bin/env bash
# Times the reference libraries (statsmodels fleiss_kappa, sklearn
# cohen_kappa_score for every rater pair and weighting) and the agreement
# package on the same ~1,000,000 judgments (333,334 items x 3 raters drawn
# from 50, grades 0..4), in one run. Both sides print Fleiss' kappa and the
# mean pairwise quadratic kappa so the figures can be compared.
#
# Usage: bench/agreement_reference.sh   (from anywhere in the repository)
set -euo pipefail
cd "$(dirname "$0")/.."
py=/usr/bin/python3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
csv="$tmp/judgments.csv"

echo "== reference: $py with statsmodels and sklearn"
"$py" - "$csv" <<'PY'
import sys, time
import numpy as np
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import fleiss_kappa

path = sys.argv[1]
rng = np.random.default_rng(12345)
n_items, n_raters, per, k = 333334, 50, 3, 5
# 3 distinct raters per item: first 3 of a random permutation.
raters = np.argsort(rng.random((n_items, n_raters)), axis=1)[:, :per]
truth = rng.integers(0, k, n_items)
noise = np.where(rng.random((n_items, per)) < 1 / 3, rng.integers(-1, 2, (n_items, per)), 0)
grades = np.clip(truth[:, None] + noise, 0, k - 1)
with open(path, "w") as f:
    f.write("item,rater,grade\n")
    items = np.repeat(np.arange(n_items), per)
    for i, r, g in zip(items, raters.ravel(), grades.ravel()):
        f.write(f"i{i},r{r},{g}\n")
print(f"data: {n_items} items x {per} raters of {n_raters} = {n_items * per} judgments")

def timed(label, fn):
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn()
    print(f"{label}: wall {1000 * (time.perf_counter() - w0):.0f} ms, cpu {1000 * (time.process_time() - c0):.0f} ms")
    return out

def fleiss():
    counts = np.zeros((n_items, k), dtype=np.int64)
    np.add.at(counts, (np.repeat(np.arange(n_items), per), grades.ravel()), 1)
    return fleiss_kappa(counts, method="fleiss")

def cohen_all():
    # Rows are pairs (a < b) observed within items, grouped by pair.
    a = np.minimum(raters[:, :, None], raters[:, None, :])
    ga = np.where(raters[:, :, None] < raters[:, None, :], grades[:, :, None], grades[:, None, :])
    gb = np.where(raters[:, :, None] < raters[:, None, :], grades[:, None, :], grades[:, :, None])
    iu = np.triu_indices(per, 1)
    b = np.maximum(raters[:, :, None], raters[:, None, :])[:, iu[0], iu[1]].ravel()
    a, ga, gb = a[:, iu[0], iu[1]].ravel(), ga[:, iu[0], iu[1]].ravel(), gb[:, iu[0], iu[1]].ravel()
    key = a * n_raters + b
    order = np.argsort(key, kind="stable")
    key, ga, gb = key[order], ga[order], gb[order]
    bounds = np.flatnonzero(np.diff(key)) + 1
    labels = list(range(k))
    quad = []
    for x, y in zip(np.split(ga, bounds), np.split(gb, bounds)):
        cohen_kappa_score(x, y, labels=labels)
        cohen_kappa_score(x, y, labels=labels, weights="linear")
        quad.append(cohen_kappa_score(x, y, labels=labels, weights="quadratic"))
    return len(quad), float(np.mean(quad))

fk = timed("statsmodels fleiss_kappa (incl. counting)", fleiss)
npairs, mq = timed("sklearn cohen_kappa_score, 3 weightings, all pairs (incl. grouping)", cohen_all)
print(f"reference: fleiss_kappa {fk:.10f}, {npairs} pairs, mean quadratic kappa {mq:.10f}")
PY

echo
echo "== agreement package (go test -bench, one core)"
AGREEMENT_BENCH_CSV="$csv" go test ./agreement -run '^$' -bench 'Headline' -benchmem -cpu 1 -benchtime 10x -v
