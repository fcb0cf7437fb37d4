"""Reference for quartiles: numpy.percentile with its default linear interpolation (Hyndman &
Fan definition 7; Debian python3-numpy). Reads numbers (one per line) from argv[1]; prints the
25th, 50th and 75th percentiles with 17 significant digits."""
import sys

import numpy as np

values = np.loadtxt(sys.argv[1], ndmin=1)
for q in (25, 50, 75):
    print(f"{np.percentile(values, q):.17g}")
