#!/usr/bin/python3
"""The peer of `tandem sync` in the README's timing: the same job written
as an analyst would script it with pandas and scipy.

    /usr/bin/python3 testdata/reference/bench_sync_pandas.py A.csv B.csv [--cuts c1,c2]

Both tables are read with read_csv and joined with an outer merge on the
key (run, event). It prints the matched counts; per variable the events
outside tolerance (|a-b| > max(abs, rel*max(|a|,|b|)), with tandem's
default tolerance), the largest absolute and relative differences with
their keys and the quantiles of the relative differences; per cut the
cumulative counts of each chain, the step efficiencies with their
Clopper-Pearson intervals and McNemar's exact test on the common events.
The tables are the benchmark's (go test ./compare/events -bench SyncOrder
-benchdir DIR); nothing here assumes they are sorted.
"""
import argparse
import time

import numpy as np
import pandas as pd
from scipy import stats

t0 = time.perf_counter()
ap = argparse.ArgumentParser()
ap.add_argument("a")
ap.add_argument("b")
ap.add_argument("--keys", default="run,event")
ap.add_argument("--cuts", default="c1,c2")
ap.add_argument("--rel", type=float, default=1e-6)
ap.add_argument("--abs", type=float, default=0.0)
args = ap.parse_args()
keys = args.keys.split(",")
cuts = args.cuts.split(",") if args.cuts else []

a = pd.read_csv(args.a)
b = pd.read_csv(args.b)
m = a.merge(b, on=keys, how="outer", suffixes=("_a", "_b"), indicator=True)
both = m["_merge"] == "both"
print("common", int(both.sum()),
      "only_a", int((m["_merge"] == "left_only").sum()),
      "only_b", int((m["_merge"] == "right_only").sum()))

c = m[both]
for v in [x for x in a.columns if x not in keys and x not in cuts]:
    x, y = c[v + "_a"].to_numpy(), c[v + "_b"].to_numpy()
    d = np.abs(x - y)
    mx = np.maximum(np.abs(x), np.abs(y))
    r = np.divide(d, mx, out=np.zeros_like(d), where=mx > 0)
    out = d > np.maximum(args.abs, args.rel * mx)
    ia, ir = int(np.argmax(d)), int(np.argmax(r))
    q = np.quantile(r, [0.5, 0.9, 0.99, 0.999])
    print(v, "outside", int(out.sum()), "of", len(d),
          "max_abs", d[ia], tuple(c[keys].iloc[ia]),
          "max_rel", r[ir], tuple(c[keys].iloc[ir]), "quantiles", q)

pa = pd.Series(True, index=a.index)
pb = pd.Series(True, index=b.index)
ca = pd.Series(True, index=c.index)
cb = pd.Series(True, index=c.index)
for cut in cuts:
    na0, nb0 = int(pa.sum()), int(pb.sum())
    pa &= a[cut].astype(bool)
    pb &= b[cut].astype(bool)
    ca &= c[cut + "_a"].astype(bool)
    cb &= c[cut + "_b"].astype(bool)
    na, nb = int(pa.sum()), int(pb.sum())
    only_a, only_b = int((ca & ~cb).sum()), int((cb & ~ca).sum())
    p = stats.binomtest(only_a, only_a + only_b, 0.5).pvalue if only_a + only_b else 1.0
    eff = []
    for k, n in ((na, na0), (nb, nb0)):
        ci = stats.binomtest(k, n).proportion_ci(0.6827, method="exact")
        eff.append((k / n, ci.low, ci.high))
    print(cut, "a", na, "b", nb, "both", int((ca & cb).sum()), "only_a", only_a, "only_b", only_b,
          "mcnemar_p", p, "eff_a", eff[0], "eff_b", eff[1])
print(f"seconds after imports: {time.perf_counter() - t0:.3f}", flush=True)
