"""Reference for the two-group tests: scipy.stats.mannwhitneyu (two-sided, method "auto", with
continuity correction) and scipy.stats.fisher_exact (two-sided), Debian python3-scipy.

Input file argv[1], one case per line:
  mwu <n1> <x_1 ... x_n1> <y_1 ... y_n2>
  fisher <a> <b> <c> <d>
Output: for mwu "U p", for fisher "p", one line per case, 17 significant digits."""
import sys

import numpy as np
from scipy import stats

for line in open(sys.argv[1]):
    f = line.split()
    if not f:
        continue
    if f[0] == "mwu":
        n1 = int(f[1])
        values = np.array([float(v) for v in f[2:]])
        r = stats.mannwhitneyu(values[:n1], values[n1:], alternative="two-sided")
        print(f"{r.statistic:.17g} {r.pvalue:.17g}")
    elif f[0] == "fisher":
        a, b, c, d = (int(v) for v in f[1:5])
        print(f"{stats.fisher_exact([[a, b], [c, d]])[1]:.17g}")
    else:
        raise SystemExit("unknown case kind " + f[0])
