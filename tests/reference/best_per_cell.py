"""Reference for MAP-Elites insertion (Mouret & Clune 2015: each cell keeps the best candidate
that reached it; on equal fitness the incumbent stays, so the earliest of the best), recomputed
with numpy from a log of every evaluated candidate.
Reads CSV rows "birth,valid,fitness,d_1,...,d_D" from argv[1]; argv[2] holds the grid as
"lower_1,upper_1,resolution_1;lower_2,...". Cell of d (docs/archive-format.md): per dimension
k_i = clip(floor((d_i - lower_i) / (upper_i - lower_i) * res_i), 0, res_i - 1), row-major.
Prints "cell fitness birth" for every filled cell, by cell, fitness with 17 digits."""
import sys

import numpy as np

log = np.loadtxt(sys.argv[1], delimiter=",", ndmin=2)
grid = [tuple(float(v) for v in dim.split(",")) for dim in sys.argv[2].split(";")]
birth = log[:, 0].astype(np.int64)
valid = log[:, 1] != 0
fitness = log[:, 2]
descriptor = log[:, 3:]
keep = valid & np.isfinite(fitness) & np.all(np.isfinite(descriptor), axis=1)
birth, fitness, descriptor = birth[keep], fitness[keep], descriptor[keep]
cell = np.zeros(len(fitness), dtype=np.int64)
for i, (lower, upper, res) in enumerate(grid):
    k = np.floor((descriptor[:, i] - lower) / (upper - lower) * res)
    k = np.clip(k, 0, res - 1).astype(np.int64)
    cell = cell * int(res) + k
# By cell, then best fitness, then earliest birth: the first row of each cell is its elite.
order = np.lexsort((birth, -fitness, cell))
first = np.ones(len(order), dtype=bool)
first[1:] = cell[order][1:] != cell[order][:-1]
for j in order[first]:
    print(f"{cell[j]} {fitness[j]:.17g} {birth[j]}")
