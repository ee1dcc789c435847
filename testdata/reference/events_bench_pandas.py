#!/usr/bin/python3
"""The pandas side of the sync benchmark: the same job as

    tandem sync A.csv B.csv --key run,event

done with a pandas outer merge: matched counts, and for each of the other
columns the count outside the default tolerance (|a-b| > 1e-9 max(|a|,|b|)),
the largest absolute and relative differences with their keys, and the
histogram of relative differences on tandem's bins. Prints the results and
the time after imports.

    /usr/bin/python3 testdata/reference/events_bench_pandas.py A.csv B.csv
"""
import sys
import time

import numpy as np
import pandas as pd

t0 = time.perf_counter()
keys = ["run", "event"]
a = pd.read_csv(sys.argv[1])
b = pd.read_csv(sys.argv[2])
m = a.merge(b, on=keys, how="outer", suffixes=("_a", "_b"), indicator=True)
both = m["_merge"] == "both"
print("common", int(both.sum()), "only_a", int((m["_merge"] == "left_only").sum()),
      "only_b", int((m["_merge"] == "right_only").sum()))
c = m[both]
edges = np.concatenate([[0, 1e-300], 10.0 ** (-16 + np.arange(171) / 10)])
for v in [x for x in a.columns if x not in keys]:
    x, y = c[v + "_a"].to_numpy(), c[v + "_b"].to_numpy()
    d = np.abs(x - y)
    mx = np.maximum(np.abs(x), np.abs(y))
    r = np.divide(d, mx, out=np.zeros_like(d), where=mx > 0)
    out = d > 1e-9 * mx
    ia, ir = int(np.argmax(d)), int(np.argmax(r))
    hist, _ = np.histogram(r[r > 0], bins=edges)
    print(v, "outside", int(out.sum()), "max_abs", d[ia], tuple(c[keys].iloc[ia]),
          "max_rel", r[ir], tuple(c[keys].iloc[ir]), "zero", int((r == 0).sum()), "hist_nonzero", int(hist.sum()))
print(f"seconds after imports: {time.perf_counter() - t0:.3f}", file=sys.stderr)
