"""Times sklearn.datasets.dump_svmlight_file on the same synthetic data that
bench/exportbench writes (same SplitMix64 keys and value kinds), with the
time to generate the numpy arrays measured separately and excluded.

Usage: svmlight_reference.py ROWS FEATURES OUT
Prints one JSON object.
"""
import json
import resource
import sys
import time

import numpy as np
from sklearn.datasets import dump_svmlight_file

DOCS_PER_QUERY = 120  # as in bench/exportbench


def splitmix64(x):
    # uint64 arithmetic wraps in numpy, as in Go.
    with np.errstate(over="ignore"):
        z = x + np.uint64(0x9E3779B97F4A7C15)
        z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        return z ^ (z >> np.uint64(31))


def generate(rows, nf):
    X = np.empty((rows, nf), dtype=np.float64)
    j = np.arange(nf, dtype=np.uint64)
    kind = np.arange(nf) % 4
    chunk = 50000
    for s in range(0, rows, chunk):
        i = np.arange(s, min(s + chunk, rows), dtype=np.uint64)[:, None]
        u = (splitmix64(i * np.uint64(nf) + j) >> np.uint64(11)).astype(np.float64) * 2.0**-53
        v = np.where(kind == 0, np.where(u < 0.3, 0.0, np.floor(u * 200)), 0.0)
        v = np.where(kind == 1, np.floor(u * 100000), v)
        v = np.where(kind == 2, np.floor(u * 1e6) / 1e6, v)
        v = np.where(kind == 3, u * 30, v)
        X[s : s + len(i)] = v
    idx = np.arange(rows, dtype=np.uint64)
    y = (splitmix64(idx ^ np.uint64(0xA5A5A5A5A5A5A5A5)) % np.uint64(5)).astype(np.int64)
    qid = np.arange(rows, dtype=np.int64) // DOCS_PER_QUERY + 1
    return X, y, qid


def main():
    rows, nf, out = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
    t0 = time.perf_counter()
    X, y, qid = generate(rows, nf)
    t1 = time.perf_counter()
    c1 = time.process_time()
    dump_svmlight_file(X, y, out, zero_based=False, query_id=qid)
    t2 = time.perf_counter()
    c2 = time.process_time()
    print(json.dumps({
        "rows": rows,
        "features": nf,
        "generate_seconds": t1 - t0,
        "dump_seconds": t2 - t1,
        "dump_cpu_seconds": c2 - c1,
        "peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
    }))


if __name__ == "__main__":
    main()
