"""Independent computation of the N-team consistency test (numpy/scipy).

Reads JSON cases from stdin: {"cases": [{"values": [[...]...], "sources":
[{"sigma": [[...]...], "rho": r}, ...]}, ...]} and prints, for each case,
the chi-square summed over bins, its p-value and each team's leave-one-out
chi-square and p-value. It uses the textbook forms, not tandem's: the
minimum over the common mean of (x - mu 1)^T V^-1 (x - mu 1) with an
explicit inverse, and the leave-one-out deviation from the weighted mean of
the others with its variance from the full covariance. Run with Debian's
/usr/bin/python3 (python3-numpy, python3-scipy).
"""
import json
import sys

import numpy as np
from scipy import stats


def covariance(case, i, n):
    v = np.zeros((n, n))
    for s in case["sources"]:
        sig = np.array([s["sigma"][t][i] for t in range(n)])
        c = np.outer(sig, sig) * s["rho"]
        np.fill_diagonal(c, sig * sig)
        v += c
    return v


def run(case):
    x = np.array(case["values"], dtype=float)
    n, bins = x.shape
    chi2 = 0.0
    loo = np.zeros(n)
    pulls = np.zeros((n, bins))
    for i in range(bins):
        v = covariance(case, i, n)
        vinv = np.linalg.inv(v)
        one = np.ones(n)
        mu = one @ vinv @ x[:, i] / (one @ vinv @ one)
        r = x[:, i] - mu
        chi2 += r @ vinv @ r
        for t in range(n):
            o = [u for u in range(n) if u != t]
            voo = v[np.ix_(o, o)]
            w = np.linalg.inv(voo) @ np.ones(n - 1)
            w /= w.sum()
            a = np.zeros(n)
            a[t] = 1.0
            a[o] = -w
            d = a @ x[:, i]
            loo[t] += d * d / (a @ v @ a)
            pulls[t, i] = d / np.sqrt(a @ v @ a)
    return {
        "chi2": chi2,
        "ndf": (n - 1) * bins,
        "p": stats.chi2.sf(chi2, (n - 1) * bins),
        "loo_chi2": loo.tolist(),
        "loo_p": [stats.chi2.sf(c, bins) for c in loo],
        # shift test of the mean pull: z = sum/sqrt(bins), two-sided normal
        "shift_p": [2 * stats.norm.sf(abs(p.sum()) / np.sqrt(bins)) for p in pulls],
    }


cases = json.load(sys.stdin)["cases"]
json.dump({"numpy": np.__version__, "results": [run(c) for c in cases]}, sys.stdout)
