#!/usr/bin/python3
"""Reference check of Tessera's CVT against scikit-learn and scipy (Debian python3-sklearn,
python3-scipy), run with /usr/bin/python3 by tests/unit/test_cvt.cpp.

Usage: cvt_energy.py DIR N D K
DIR holds raw little-endian arrays written by the test:
  samples.f64   float64 [N, D]  points both sides cluster
  centroids.f64 float64 [K, D]  Tessera's Lloyd centroids for those points
  cells.i64     int64 [N]       Tessera's nearest-centroid lookup of every point
Prints three "name value" lines:
  sklearn_energy   mean squared distance of sklearn.cluster.KMeans on the same points
  scipy_energy     mean squared distance to Tessera's centroids, recomputed with cKDTree
  cell_mismatches  points whose cKDTree nearest centroid differs from Tessera's lookup
"""
import os
import sys

# One thread: ctest runs tests side by side, and KMeans' thread pool would oversubscribe the CPUs.
os.environ["OMP_NUM_THREADS"] = "1"

import numpy as np  # noqa: E402
from scipy.spatial import cKDTree  # noqa: E402
from sklearn.cluster import KMeans  # noqa: E402


def main():
    folder, n, d, k = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
    samples = np.fromfile(f"{folder}/samples.f64", dtype="<f8")
    centroids = np.fromfile(f"{folder}/centroids.f64", dtype="<f8")
    cells = np.fromfile(f"{folder}/cells.i64", dtype="<i8")
    if samples.size != n * d or centroids.size != k * d or cells.size != n:
        print(f"{folder}: array sizes do not match N={n} D={d} K={k}", file=sys.stderr)
        return 2
    samples = samples.reshape(n, d)
    centroids = centroids.reshape(k, d)

    dist, nearest = cKDTree(centroids).query(samples, k=1)
    scipy_energy = float(np.mean(dist**2))
    mismatches = int(np.count_nonzero(nearest != cells))

    # k-means++ with several restarts: a strong optimum to hold Lloyd from a random start against.
    km = KMeans(n_clusters=k, init="k-means++", n_init=3, max_iter=300, tol=1e-7,
                algorithm="lloyd", random_state=0).fit(samples)
    sklearn_energy = float(km.inertia_) / n

    print(f"sklearn_energy {sklearn_energy:.17g}")
    print(f"scipy_energy {scipy_energy:.17g}")
    print(f"cell_mismatches {mismatches}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
