#!/usr/bin/python3
"""Reference values for tandem's statistics from an independent library.

Run with Debian's python3-scipy (the versions used are written into the
output). Regenerate with:

    /usr/bin/python3 testdata/reference/make_scipy_reference.py > testdata/reference/scipy_values.json

Nothing here imports or mirrors tandem's code: chi-square and normal tails,
the exact Kolmogorov-Smirnov distribution (scipy.stats.kstwo, which follows
Simard and L'Ecuyer 2011; "kstwo_sf_large" samples it around and beyond
n = 10^4, and "kstwo_sf_dmtw" evaluates scipy's own exact Durbin-matrix
routine there, scipy.stats._ksstats._kolmogn_DMTW, as a second reference
for the region where kstwo itself switches to an expansion) and the
one-sample KS test come from scipy; the exact runs-test probabilities are
summed from binomial coefficients with Python's exact integer arithmetic
(math.comb), following Swed and Eisenhart (1943).
"""
import json
import math
import sys
from fractions import Fraction

import numpy as np
import pandas as pd
import scipy
from scipy import stats
from scipy.stats import _ksstats


def runs_cdf(n1, n2, r):
    """Exact P(R <= r) with rational arithmetic."""
    total = math.comb(n1 + n2, n1)
    count = 0
    for x in range(2, r + 1):
        k = x // 2
        if x % 2 == 0:
            c = 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1)
        else:
            c = math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1) + math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k)
        count += c
    return float(Fraction(count, total))


def comparison(path_a, path_b, value, errors, rho):
    """Each error column is a source k with its own correlation rho[k]:
    sigma_d^2 = sum_k (sa_k^2 + sb_k^2 - 2 rho_k sa_k sb_k)."""
    a = pd.read_csv(path_a, comment="#")
    b = pd.read_csv(path_b, comment="#")
    d = a[value] - b[value]
    sd = np.sqrt(sum(a[e] ** 2 + b[e] ** 2 - 2 * rho[e] * a[e] * b[e] for e in errors))
    pulls = (d / sd).to_numpy()
    n = len(pulls)
    chi2 = float(np.sum(pulls**2))
    ks = stats.kstest(pulls, "norm", method="exact")
    signs = np.sign(d.to_numpy())
    signs = signs[signs != 0]
    runs = 1 + int(np.sum(signs[1:] != signs[:-1]))
    n1, n2 = int(np.sum(signs > 0)), int(np.sum(signs < 0))
    pmax = float(np.max(np.abs(pulls)))
    q = 2 * stats.norm.sf(pmax)
    return {
        "a": path_a, "b": path_b, "value": value, "errors": errors, "correlations": rho,
        "pulls": pulls.tolist(),
        "chi2": chi2, "ndf": n, "p_value": float(stats.chi2.sf(chi2, n)),
        "pull_mean": float(np.mean(pulls)), "pull_width": float(np.std(pulls, ddof=1)),
        "ks_statistic": float(ks.statistic), "ks_p_value": float(ks.pvalue),
        "runs": runs, "runs_positive": n1, "runs_negative": n2, "runs_p_value": runs_cdf(n1, n2, runs),
        "max_abs_pull": pmax, "max_pull_p_value": float(-np.expm1(n * np.log1p(-q))),
    }


out = {
    "generator": "testdata/reference/make_scipy_reference.py",
    "python": sys.version.split()[0],
    "scipy": scipy.__version__,
    "numpy": np.__version__,
    "pandas": pd.__version__,
    "chi2_sf": [[x, k, float(stats.chi2.sf(x, k))] for x, k in
                [(0.5, 1), (3.841, 1), (10.0, 3), (18.307, 10), (25.0, 10), (150.0, 100), (1e4, 10000), (1100.0, 1000), (60.0, 5)]],
    "norm_cdf": [[x, float(stats.norm.cdf(x))] for x in [-3.0, -1.0, 0.0, 0.5, 1.0, 1.96, 2.5758, 4.0]],
    "kstwo_sf": [[n, d, float(stats.kstwo.sf(d, n))] for n, d in
                 [(1, 0.7), (2, 0.5), (5, 0.3), (10, 0.2), (10, 0.40925), (20, 0.15), (50, 0.12), (100, 0.05),
                  (100, 0.136), (500, 0.04), (1000, 0.03), (2000, 0.02), (5000, 0.015), (10000, 0.01), (10000, 0.005)]],
    "kstwo_sf_large": [[n, c / math.sqrt(n), float(stats.kstwo.sf(c / math.sqrt(n), n))]
                       for n in [2000, 5000, 9999, 10000, 10001, 10002, 15000, 20000, 50000, 99999, 100000, 100001, 200000, 1000000]
                       # scipy's one-sided Smirnov tail (n d^2 >= 2.2) takes seconds at n > 10^5
                       for c in [0.3, 0.45, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2, 1.36, 1.45]
                       + ([1.5, 1.63, 1.8, 2.0, 2.5] if n <= 100001 else [])],
    "kstwo_sf_dmtw": [[n, c / math.sqrt(n), float(1 - _ksstats._kolmogn_DMTW(n, c / math.sqrt(n), cdf=True))]
                      for n in [10001, 100000] for c in [0.6, 1.3]],
    "runs_cdf": [[n1, n2, r, runs_cdf(n1, n2, r)] for n1, n2, r in
                 [(5, 5, 3), (10, 10, 6), (10, 10, 7), (12, 8, 5), (20, 20, 14), (3, 7, 2), (1, 1, 2), (30, 40, 25), (200, 180, 150)]],
    "comparisons": [
        comparison("testdata/reference/heron_like_a.csv", "testdata/reference/heron_like_b.csv", "y", ["stat", "syst"], {"stat": 0.0, "syst": 0.0}),
        comparison("testdata/reference/heron_like_a.csv", "testdata/reference/heron_like_b.csv", "y", ["stat", "syst"], {"stat": 0.4, "syst": 0.4}),
        comparison("testdata/reference/heron_like_a.csv", "testdata/reference/heron_like_b.csv", "y", ["stat", "syst"], {"stat": 0.6, "syst": 1.0}),
    ],
}
json.dump(out, sys.stdout, indent=1)
print()
