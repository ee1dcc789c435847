"""Write the tables that users' tools write, and what those tools read back.

Run by compare/table's TestUserFiles with Debian's /usr/bin/python3
(python3-pandas, python3-numpy): python3 make.py OUTDIR

For every file NAME written the way a tool writes it by default, NAME.expect
holds the numbers the same tool (or pandas) reads back from it (read_csv
with float_precision="round_trip": its default parser may be off by an
ulp), one bin a
line, "lo,hi,rate,stat" with Python's repr (the shortest text that rounds
back to the same double), so the test can hold tandem's reading to it.
"""
import csv
import io
import json
import os
import sys

import numpy as np
import pandas as pd

out = sys.argv[1]
rng = np.random.default_rng(20261202)  # fixed seed
n = 50
edges = np.cumsum(rng.uniform(0.5, 2.0, n + 1))
rate = rng.normal(100.0, 10.0, n)
stat = np.sqrt(np.abs(rate)) * rng.uniform(0.9, 1.1, n)
stat[3] = 1.234e-12  # a small number that to_json's default rounding loses
df = pd.DataFrame({"lo": edges[:-1], "hi": edges[1:], "rate": rate, "stat": stat})
cols = ["lo", "hi", "rate", "stat"]


def expect(name, frame):
    with open(os.path.join(out, name + ".expect"), "w") as f:
        f.write(",".join(cols) + "\n")
        for row in frame[cols].itertuples(index=False):
            f.write(",".join(repr(float(v)) for v in row) + "\n")


def path(name):
    return os.path.join(out, name)


# pandas to_csv(path): the index is written as an unnamed first column.
df.to_csv(path("pandas_index.csv"))
expect("pandas_index.csv", pd.read_csv(path("pandas_index.csv"), index_col=0, float_precision="round_trip"))

# numpy savetxt with a header: "# lo,hi,rate,stat", numbers "%.18e".
np.savetxt(path("numpy_header.csv"), df[cols].values, delimiter=",", header=",".join(cols))
back = np.genfromtxt(path("numpy_header.csv"), delimiter=",", names=True)
expect("numpy_header.csv", pd.DataFrame({c: back[c] for c in cols}))

# R's write.csv layout: a quoted header with an empty first name, quoted
# row names 1..n, numbers unquoted (R quotes character columns only; here
# with csv.QUOTE_NONNUMERIC) -- and the same with every field quoted
# (csv.QUOTE_ALL), as Python's csv module writes on request.
for name, quoting in [("r_write_csv.csv", csv.QUOTE_NONNUMERIC), ("quote_all_index.csv", csv.QUOTE_ALL)]:
    with open(path(name), "w", newline="") as f:
        w = csv.writer(f, quoting=quoting)
        w.writerow([""] + cols)
        for i, row in enumerate(df[cols].itertuples(index=False), start=1):
            w.writerow([str(i)] + [repr(float(v)) if quoting == csv.QUOTE_ALL else float(v) for v in row])
    expect(name, pd.read_csv(path(name), index_col=0, float_precision="round_trip"))
with open(path("quote_all.csv"), "w", newline="") as f:
    w = csv.writer(f, quoting=csv.QUOTE_ALL)
    w.writerow(cols)
    for row in df[cols].itertuples(index=False):
        w.writerow([repr(float(v)) for v in row])
expect("quote_all.csv", pd.read_csv(path("quote_all.csv"), float_precision="round_trip"))

# pandas to_json in the orients that hold a table, with its defaults, and
# what json.load reads back (the numbers as written, rounded by pandas).
for orient in ["split", "records", "columns", "index"]:
    name = "pandas_%s.json" % orient
    df.to_json(path(name), orient=orient)
    expect(name, pd.read_json(path(name), orient=orient, precise_float=True)[cols])

with open(os.path.join(out, "versions.txt"), "w") as f:
    f.write("python %s, pandas %s, numpy %s\n" % (sys.version.split()[0], pd.__version__, np.__version__))
