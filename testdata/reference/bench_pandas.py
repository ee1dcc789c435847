#!/usr/bin/python3
"""The pandas + scipy equivalent of `tandem compare A B --value rate --error
stat --error syst`, for the side-by-side timing in the README.

    /usr/bin/python3 testdata/reference/bench_pandas.py A.csv B.csv [--exact-ks]

The value column is "rate" (or "y" in tables that have no "rate" column).

It reads both tables, checks the bin edges, and computes the same
statistics: pulls, chi-square and its p-value, pull mean and width, the KS
test against N(0,1) with scipy's asymptotic distribution, as an analyst
scripting this comparison would call it (kstest(..., method='asymp');
--exact-ks keeps scipy's default method, which at n = 10**6 evaluates the
exact distribution, about 2 s), the runs test on the signs
(normal approximation: scipy has no exact runs test) and the Sidak-corrected
largest pull. It prints the time spent after the imports.
"""
import sys
import time

import numpy as np
import pandas as pd
from scipy import stats

t0 = time.perf_counter()
a = pd.read_csv(sys.argv[1], comment="#")
b = pd.read_csv(sys.argv[2], comment="#")
if not (np.allclose(a["lo"], b["lo"], rtol=1e-9, atol=0) and np.allclose(a["hi"], b["hi"], rtol=1e-9, atol=0)):
    sys.exit("bin edges differ")
for t in (a, b):
    if not np.isfinite(t.to_numpy()).all() or (t["lo"].to_numpy() >= t["hi"].to_numpy()).any():
        sys.exit("bad table")
sa = np.sqrt(a["stat"] ** 2 + a["syst"] ** 2)
sb = np.sqrt(b["stat"] ** 2 + b["syst"] ** 2)
value = "rate" if "rate" in a.columns else "y"
d = (a[value] - b[value]).to_numpy()
pulls = d / np.sqrt(sa**2 + sb**2).to_numpy()
n = len(pulls)
chi2 = float(np.sum(pulls**2))
p = stats.chi2.sf(chi2, n)
mean, width = pulls.mean(), pulls.std(ddof=1)
ks = stats.kstest(pulls, "norm", method="auto" if "--exact-ks" in sys.argv[3:] else "asymp")
s = np.sign(d[d != 0])
runs = 1 + int(np.count_nonzero(s[1:] != s[:-1]))
n1, n2 = int((s > 0).sum()), int((s < 0).sum())
mu = 2 * n1 * n2 / (n1 + n2) + 1
var = (mu - 1) * (mu - 2) / (n1 + n2 - 1)
runs_p = stats.norm.cdf((runs - mu) / np.sqrt(var))
pmax = np.abs(pulls).max()
sidak = -np.expm1(n * np.log1p(-2 * stats.norm.sf(pmax)))
elapsed = time.perf_counter() - t0
print(f"chi2={chi2:.6g} p={p:.4g} ks_p={ks.pvalue:.4g} runs_p={runs_p:.4g} max_p={sidak:.4g}")
print(f"elapsed_after_imports={elapsed:.3f}s")
