#!/usr/bin/python3
"""Synthetic count tables for the README's count-data commands.

Regenerate with Debian's python3-numpy:

    /usr/bin/python3 testdata/reference/counts_make_tables.py

Two chains select events from the same 30-bin falling spectrum, means
20*exp(-2x) (x the bin centre in [0, 1]); half of each chain's events are
shared (column "common" of counts_a.csv). Weighted counts: each event gets
a weight uniform in [0.5, 1.5]; "w" is the sum of weights, "w2" the sum of
squared weights. numpy's default_rng(2026), so the files do not change.
"""
import numpy as np

rng = np.random.default_rng(2026)
nb = 30
x = (np.arange(nb) + 0.5) / nb
mu = 20 * np.exp(-2 * x)
common = rng.poisson(0.5 * mu)
na = common + rng.poisson(0.5 * mu)
nbb = common + rng.poisson(0.5 * mu)


def weights(n):
    w, w2 = [], []
    for k in n:
        ws = rng.uniform(0.5, 1.5, size=k)
        w.append(float(np.sum(ws)))
        w2.append(float(np.sum(ws * ws)))
    return w, w2


wa, w2a = weights(na)
wb, w2b = weights(nbb)
for name, n, w, w2, c in [("counts_a.csv", na, wa, w2a, common), ("counts_b.csv", nbb, wb, w2b, None)]:
    with open("testdata/reference/" + name, "w") as f:
        f.write("# synthetic (testdata/reference/counts_make_tables.py, numpy default_rng(2026))\n")
        f.write("lo,hi,n," + ("common," if c is not None else "") + "w,w2\n")
        for i in range(nb):
            cols = [f"{i / nb:.6g}", f"{(i + 1) / nb:.6g}", str(int(n[i]))]
            if c is not None:
                cols.append(str(int(c[i])))
            cols += [f"{w[i]:.6f}", f"{w2[i]:.6f}"]
            f.write(",".join(cols) + "\n")
