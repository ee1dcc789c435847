#!/usr/bin/python3
"""Reference values for tandem's count-data tests from an independent library.

Run with Debian's python3-scipy (the versions used are written into the
output). Regenerate with:

    /usr/bin/python3 testdata/reference/counts_make_reference.py > testdata/reference/counts_reference.json

Nothing here imports or mirrors tandem's code:
  binomtest   scipy.stats.binomtest(k, n, p).pvalue, two-sided (the
              "minimum likelihood" definition with scipy's relative
              tolerance 1e-7), on a grid of small and large n and several p
  mcnemar     McNemar's exact test as scipy.stats.binomtest(n1, n1+n2, 0.5)
  ks_uniform  scipy.stats.kstest(u, "uniform", method="exact") on samples
              drawn with numpy (fixed seed), statistic and p-value
  weighted    Pearson's chi-square of 2 x m tables with equal column totals
              (scipy.stats.chi2_contingency, correction=False), to which the
              chi-square for weighted histograms reduces with unit weights
"""
import json
import sys

import numpy as np
import scipy
from scipy import stats


def main():
    out = {"scipy": scipy.__version__, "numpy": np.__version__,
           "python": sys.version.split()[0]}
    rows = []
    for n in [1, 2, 3, 5, 8, 13, 20, 37, 100, 1000, 12345]:
        for p in [0.5, 0.25, 0.1, 0.6, 1.0 / 3.0, 0.9]:
            ks = sorted(set([0, 1, 2, n // 3, n // 2, int(n * p), int(n * p) + 1, n - 1, n]))
            for k in ks:
                if 0 <= k <= n:
                    rows.append([k, n, p, float(stats.binomtest(k, n, p).pvalue)])
    # a few far tails
    for k, n, p in [(0, 200, 0.5), (5, 400, 0.5), (300, 400, 0.5), (1, 60, 0.9), (2000, 10000, 0.25)]:
        rows.append([k, n, p, float(stats.binomtest(k, n, p).pvalue)])
    out["binomtest"] = rows
    mc = []
    for n1, n2 in [(0, 0), (0, 1), (1, 7), (7, 1), (3, 3), (10, 2), (25, 40), (0, 30), (150, 120)]:
        pv = 1.0 if n1 + n2 == 0 else float(stats.binomtest(n1, n1 + n2, 0.5).pvalue)
        mc.append([n1, n2, pv])
    out["mcnemar"] = mc
    rng = np.random.default_rng(20)
    ku = []
    for n, power in [(5, 1.0), (12, 1.0), (30, 1.5), (30, 1.0), (200, 1.0), (200, 1.3)]:
        u = rng.uniform(size=n) ** power
        r = stats.kstest(u, "uniform", method="exact")
        ku.append({"u": [float(x) for x in u], "d": float(r.statistic), "p": float(r.pvalue)})
    out["ks_uniform"] = ku
    wt = []
    for a, b in [([10, 20, 30, 5], [12, 25, 20, 8]), ([3, 0, 7, 1, 9], [5, 2, 4, 3, 6]), ([100, 50], [80, 70])]:
        chi2, p, dof, _ = stats.chi2_contingency(np.array([a, b]), correction=False)
        wt.append({"a": a, "b": b, "chi2": float(chi2), "dof": int(dof), "p": float(p)})
    out["weighted"] = wt
    json.dump(out, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
