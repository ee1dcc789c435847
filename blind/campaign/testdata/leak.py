# Measures what a bin's pull and exact p-value reveal of its counts (README,
# threat model; SPEC.md section 7.1). Run with Debian's /usr/bin/python3
# (python3-scipy). Our own script; it is not run by the tests.
# How many (k, n), n <= N, does a bin's published pull together with its
# exact binomial p-value single out, at full precision and rounded up to
# 1-2-5 x 10^k?  (two-sided binomial test, p0 = 1/2, scipy.stats.binomtest)
import math, collections
from scipy.stats import binomtest
N = 100
def up125(p):
    if p >= 1: return 1.0
    e = math.floor(math.log10(p)) - 1
    while True:
        for m in (1, 2, 5):
            c = float(f"{m}e{e}")
            if c >= p: return c
        e += 1
full, rounded = collections.defaultdict(set), collections.defaultdict(set)
pairs = []
for n in range(1, N + 1):
    for k in range(0, n + 1):
        x = round((2 * k - n) / math.sqrt(n), 9)
        p = binomtest(k, n, 0.5).pvalue
        full[(x, round(p, 12))].add(n)
        rounded[(x, up125(p))].add(n)
        pairs.append((n, x, p))
def unique(d, key):
    return sum(1 for n, x, p in pairs if len(d[key(x, p)]) == 1)
uf = unique(full, lambda x, p: (x, round(p, 12)))
ur = unique(rounded, lambda x, p: (x, up125(p)))
print(f"pairs (k, n) with 1 <= n <= {N}: {len(pairs)}")
print(f"n singled out by pull + full p-value: {uf} ({100*uf/len(pairs):.1f} %)")
print(f"n singled out by pull + p rounded up to 1-2-5: {ur} ({100*ur/len(pairs):.1f} %)")
# without the pull (a campaign's counts column publishes no uncertainty):
# the rounded p-value alone
alone = collections.defaultdict(set)
for n, x, p in pairs:
    alone[up125(p)].add(n)
ua = sum(1 for n, x, p in pairs if len(alone[up125(p)]) == 1)
print(f"n singled out by the rounded p-value alone: {ua} ({100*ua/len(pairs):.1f} %), {len(alone)} distinct values")
