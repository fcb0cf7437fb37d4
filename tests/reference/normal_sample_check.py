"""Checks a sample of standard normal deviates with scipy (Debian python3-scipy).

usage: normal_sample_check.py SAMPLE_FILE
SAMPLE_FILE holds little-endian doubles. Prints one line of name value pairs:
ks_p (scipy.stats.kstest against scipy.stats.norm), mean, variance, skewness and excess kurtosis
(scipy.stats.describe) with the standard error of each under normality (for n draws: 1/sqrt(n),
sqrt(2/n), sqrt(6/n), sqrt(24/n); e.g. Kendall & Stuart, The Advanced Theory of Statistics, vol. 1),
and tail (draws with |x| > 3.6541528853610088, where a 256-layer ziggurat switches to its tail
method) with tail_expected = n * 2 * norm.sf(3.6541528853610088).
"""
import sys

import numpy as np
from scipy import stats

x = np.fromfile(sys.argv[1], dtype="<f8")
n = x.size
d = stats.describe(x)
r = 3.6541528853610088
values = {
    "n": n,
    "ks_p": stats.kstest(x, stats.norm.cdf).pvalue,
    "mean": d.mean, "mean_se": 1 / np.sqrt(n),
    "variance": d.variance, "variance_se": np.sqrt(2 / n),
    "skewness": d.skewness, "skewness_se": np.sqrt(6 / n),
    "kurtosis": d.kurtosis, "kurtosis_se": np.sqrt(24 / n),
    "tail": int(np.sum(np.abs(x) > r)), "tail_expected": n * 2 * stats.norm.sf(r),
}
print(" ".join(f"{k} {v!r}" for k, v in values.items()))
