"""Reference values for the cross-check in crosscheck_test.go.

Reads data sets {"k": K, "ratings": [[item, rater, grade], ...]} from the JSON
file named on the command line and prints, per data set, Cohen's kappa
(sklearn.metrics.cohen_kappa_score) and its standard error
(statsmodels.stats.inter_rater.cohens_kappa std_kappa) for every rater pair
that shares an item, and Fleiss' kappa (statsmodels fleiss_kappa) over the
items with the modal number of ratings. Fleiss' null SE (Fleiss, Nee &
Landis 1979) and Krippendorff's alpha are recomputed here from their
textbook definitions, by brute force over rating pairs, as an independent
second implementation (no packaged reference is available for them).
"""
import json
import math
import sys
import warnings
from collections import Counter, defaultdict
from itertools import combinations

import numpy as np
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import cohens_kappa, fleiss_kappa

warnings.simplefilter("ignore")
np.seterr(all="ignore")


def num(x):
    x = float(x)
    return None if math.isnan(x) or math.isinf(x) else x


def alpha_bruteforce(units, metric):
    # Krippendorff (2011): coincidences from all ordered pairs of values
    # within each unit, weighted 1/(m_u - 1).
    o = defaultdict(float)
    for vals in units:
        m = len(vals)
        if m < 2:
            continue
        for i in range(m):
            for j in range(m):
                if i != j:
                    o[(vals[i], vals[j])] += 1.0 / (m - 1)
    nc = defaultdict(float)
    for (c, _), v in o.items():
        nc[c] += v
    n = sum(nc.values())
    values = sorted(nc)
    if n == 0 or len(values) < 2:
        return None

    def d2(c, k):
        if metric == "nominal":
            return 0.0 if c == k else 1.0
        if metric == "interval":
            return float(c - k) ** 2
        if metric == "ratio":
            return 0.0 if c + k == 0 else ((c - k) / (c + k)) ** 2
        lo, hi = min(c, k), max(c, k)
        s = sum(nc[g] for g in values if lo <= g <= hi) - (nc[c] + nc[k]) / 2
        return s * s

    do = sum(v * d2(c, k) for (c, k), v in o.items())
    de = sum(nc[c] * nc[k] * d2(c, k) for c in values for k in values)
    return num(1 - (n - 1) * do / de)


def fnl_se(rows, m):
    # Fleiss, Nee & Landis (1979) null standard error of Fleiss' kappa.
    n = len(rows)
    tot = np.asarray(rows, float).sum(0)
    p = tot / (n * m)
    q = 1 - p
    spq = (p * q).sum()
    if spq == 0:
        return None
    v = spq ** 2 - (p * q * (q - p)).sum()
    return num(math.sqrt(2.0 / (n * m * (m - 1))) * math.sqrt(max(v, 0)) / spq)


def one(ds):
    k = ds["k"]
    by_item = defaultdict(dict)
    for item, rater, grade in ds["ratings"]:
        by_item[item][rater] = grade  # a later judgment supersedes
    raters = sorted({r for g in by_item.values() for r in g})
    pairs = []
    for a, b in combinations(raters, 2):
        shared = [i for i, g in by_item.items() if a in g and b in g]
        if not shared:
            continue
        y1 = [by_item[i][a] for i in shared]
        y2 = [by_item[i][b] for i in shared]
        table = np.zeros((k, k))
        for x, y in zip(y1, y2):
            table[x, y] += 1
        labels = list(range(k))
        rec = {"a": a, "b": b, "n": len(shared)}
        for name, w in (("none", None), ("linear", "linear"), ("quadratic", "quadratic")):
            rec["kappa_" + name] = num(cohen_kappa_score(y1, y2, labels=labels, weights=w))
            res = cohens_kappa(table) if w is None else cohens_kappa(table, wt=w)
            rec["se_" + name] = num(res.std_kappa)
            rec["var_" + name] = num(res.var_kappa)
        pairs.append(rec)

    sizes = Counter(len(g) for g in by_item.values() if len(g) >= 2)
    fl = {"m": 0, "items": 0, "kappa": None, "se": None}
    if sizes:
        m = max(sizes, key=lambda s: (sizes[s], s))
        rows = []
        for g in by_item.values():
            if len(g) == m:
                c = [0] * k
                for v in g.values():
                    c[v] += 1
                rows.append(c)
        fl = {"m": m, "items": len(rows), "kappa": num(fleiss_kappa(np.asarray(rows), method="fleiss")),
              "se": fnl_se(rows, m)}

    units = [list(g.values()) for g in by_item.values()]
    alpha = {mt: alpha_bruteforce(units, mt) for mt in ("nominal", "ordinal", "interval", "ratio")}
    return {"pairs": pairs, "fleiss": fl, "alpha": alpha}


def main():
    with open(sys.argv[1]) as f:
        sets = json.load(f)
    json.dump([one(ds) for ds in sets], sys.stdout)


if __name__ == "__main__":
    main()
