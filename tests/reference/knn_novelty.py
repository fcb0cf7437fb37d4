"""Reference for novelty scores: mean distance to the k nearest other points, with scipy's
cKDTree (Debian python3-scipy). Reads points (one per line, comma-separated) from argv[1],
k from argv[2]; prints one novelty per line with 17 significant digits.

A point's own entry comes back from the query at distance 0; asking for k + 1 neighbours and
dropping the first leaves the k nearest others (the test's points are distinct)."""
import sys

import numpy as np
from scipy.spatial import cKDTree

points = np.loadtxt(sys.argv[1], delimiter=",", ndmin=2)
k = int(sys.argv[2])
distances, _ = cKDTree(points).query(points, k=k + 1)
for row in distances:
    print(f"{row[1:].mean():.17g}")
