#!/usr/bin/python3
"""Make the event-sync test tables and their reference values.

Run with Debian's /usr/bin/python3 (numpy, pandas, scipy):

    /usr/bin/python3 testdata/reference/events_make_reference.py testdata/reference

It writes events_a.csv (sorted by key), events_b.csv (shuffled, so tandem
takes its unsorted path) and events_reference.json: the matched counts,
per-variable agreement, cut flow with McNemar's exact test (scipy.stats.
binomtest) and Clopper-Pearson intervals (scipy.stats.beta.ppf), and the
per-bin overlap, all computed with pandas from the same files. The
versions used are recorded in the JSON.
"""
import json
import sys

import numpy as np
import pandas as pd
import scipy
from scipy import stats

out = sys.argv[1] if len(sys.argv) > 1 else "."
rng = np.random.default_rng(20261201)

n = 3000
runs = rng.integers(100, 106, n)
evs = rng.integers(1, 10**9, n)
a = pd.DataFrame({"run": runs, "event": evs}).drop_duplicates(["run", "event"])
n = len(a)
a["energy"] = np.round(rng.exponential(40.0, n), 6)
a["angle"] = np.round(rng.uniform(-1.5, 1.5, n), 6)
a["hits"] = rng.integers(3, 60, n).astype(float)
u = rng.uniform(size=(n, 3))
a["trigger"] = (u[:, 0] < 0.9).astype(int)
a["quality"] = u[:, 1] < 0.8
a["fiducial"] = (u[:, 2] < 0.7).astype(int)

b = a.copy()
# B loses 4% of A's events and has 150 of its own
keep = rng.uniform(size=n) > 0.04
b = b[keep].copy()
extra = pd.DataFrame({"run": rng.integers(100, 106, 150), "event": rng.integers(10**9, 2 * 10**9, 150)})
extra["energy"] = np.round(rng.exponential(40.0, 150), 6)
extra["angle"] = np.round(rng.uniform(-1.5, 1.5, 150), 6)
extra["hits"] = rng.integers(3, 60, 150).astype(float)
extra["trigger"] = 1
extra["quality"] = True
extra["fiducial"] = 1
b = pd.concat([b, extra.drop_duplicates(["run", "event"])])
m = len(b)
# small energy differences on 5%, a few large ones; angle rounding noise
pick = rng.uniform(size=m) < 0.05
b.loc[pick, "energy"] = np.round(b.loc[pick, "energy"] * (1 + rng.normal(0, 1e-5, pick.sum())), 6)
big = rng.uniform(size=m) < 0.004
b.loc[big, "energy"] = np.round(b.loc[big, "energy"] * 1.02, 6)
b.loc[rng.uniform(size=m) < 0.03, "angle"] += 1e-6
b["angle"] = np.round(b["angle"], 6)
# B's quality cut drops 3% more events than A's; fiducial flips a few both ways
q = rng.uniform(size=m) < 0.03
b.loc[q, "quality"] = False
f = rng.uniform(size=m) < 0.01
b.loc[f, "fiducial"] = 1 - b.loc[f, "fiducial"]

a = a.sort_values(["run", "event"])
b = b.sample(frac=1, random_state=3)
a.to_csv(f"{out}/events_a.csv", index=False)
b.to_csv(f"{out}/events_b.csv", index=False)

# --- reference values, from the files as written
A = pd.read_csv(f"{out}/events_a.csv")
B = pd.read_csv(f"{out}/events_b.csv")
keys = ["run", "event"]
M = A.merge(B, on=keys, how="outer", suffixes=("_a", "_b"), indicator=True)
C = M[M["_merge"] == "both"]
tol = {"energy": (0.0, 1e-4), "angle": (1e-9, 0.0), "hits": (0.0, 0.0)}
variables = []
for v, (abs_, rel) in tol.items():
    x, y = C[f"{v}_a"].to_numpy(), C[f"{v}_b"].to_numpy()
    d = np.abs(x - y)
    mx = np.maximum(np.abs(x), np.abs(y))
    outside = d > np.maximum(abs_, rel * mx)
    r = np.divide(d, mx, out=np.zeros_like(d), where=mx > 0)
    variables.append({"name": v, "abs": abs_, "rel": rel, "compared": int(len(C)),
                      "outside_tolerance": int(outside.sum()), "max_abs_diff": float(d.max()),
                      "max_rel_diff": float(r.max())})

cuts = ["trigger", "quality", "fiducial"]
def cum(df, suffix):
    ok = np.ones(len(df), bool)
    out = []
    for c in cuts:
        ok = ok & df[c + suffix].astype(bool).to_numpy()
        out.append(ok.copy())
    return out
ca, cb = cum(A, ""), cum(B, "")
cca, ccb = cum(C, "_a"), cum(C, "_b")
cl = 0.6827
steps = []
prev_a, prev_b = len(A), len(B)
for k, c in enumerate(cuts):
    na, nb = int(ca[k].sum()), int(cb[k].sum())
    both = int((cca[k] & ccb[k]).sum())
    oa = int((cca[k] & ~ccb[k]).sum())
    ob = int((~cca[k] & ccb[k]).sum())
    p = 1.0 if oa + ob == 0 else float(stats.binomtest(oa, oa + ob, 0.5).pvalue)
    def cp(k_, n_):
        lo = 0.0 if k_ == 0 else float(stats.beta.ppf((1 - cl) / 2, k_, n_ - k_ + 1))
        hi = 1.0 if k_ == n_ else float(stats.beta.ppf(1 - (1 - cl) / 2, k_ + 1, n_ - k_))
        return [lo, hi]
    steps.append({"cut": c, "a": na, "b": nb, "both": both, "only_a": oa, "only_b": ob, "p_value": p,
                  "cp_a": cp(na, prev_a), "cp_b": cp(nb, prev_b)})
    prev_a, prev_b = na, nb

edges = [0, 10, 20, 40, 80, 1000]
sel_a, sel_b = ca[-1], cb[-1]
bins = []
ia = np.digitize(A["energy"].to_numpy(), edges) - 1
ib = np.digitize(B["energy"].to_numpy(), edges) - 1
ja = np.digitize(C["energy_a"].to_numpy(), edges) - 1
jb = np.digitize(C["energy_b"].to_numpy(), edges) - 1
for i in range(len(edges) - 1):
    na = int(((ia == i) & sel_a).sum())
    nb = int(((ib == i) & sel_b).sum())
    nc = int(((ja == i) & (jb == i) & cca[-1] & ccb[-1]).sum())
    bins.append({"lo": edges[i], "hi": edges[i + 1], "n_a": na, "n_b": nb, "n_common": nc,
                 "rho": nc / np.sqrt(na * nb) if na and nb else 0.0})

# McNemar on a few published-size cases, for the function alone
mcnemar = [{"n1": n1, "n2": n2, "p_value": float(stats.binomtest(n1, n1 + n2, 0.5).pvalue)}
           for n1, n2 in [(0, 5), (1, 9), (7, 3), (12, 30), (250, 300), (5000, 5200), (0, 60)]]

ref = {
    "versions": {"python": sys.version.split()[0], "numpy": np.__version__, "pandas": pd.__version__,
                 "scipy": scipy.__version__},
    "keys": keys, "cl": cl,
    "matched": {"common": int(len(C)), "only_a": int((M["_merge"] == "left_only").sum()),
                "only_b": int((M["_merge"] == "right_only").sum())},
    "variables": variables, "cutflow": steps,
    "binning": {"var": "energy", "edges": edges, "bins": bins},
    "mcnemar": mcnemar,
}
with open(f"{out}/events_reference.json", "w") as fh:
    json.dump(ref, fh, indent=1)
    fh.write("\n")
print("wrote", out, ref["versions"])
