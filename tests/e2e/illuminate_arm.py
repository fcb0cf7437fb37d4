# ctest-labels: engine
"""`tessera illuminate problems/arm.toml` end to end: the archive h5py reads back holds, for every
elite, exactly the descriptor and fitness that numpy recomputes from the stored genome, in the
grid cell that the archive-format formula gives; 1,000,000 evaluations cover more than 70% of the
100x100 grid; --threads 1 and --threads 2 give bit-identical archives."""
import os
import re
import numpy as np
from tessera_test_util import run, problem, tempdir, read_archive, assert_same_run

work = tempdir()

# --- small run, recomputed with numpy -------------------------------------------------------
out = os.path.join(work, "small")
proc = run("illuminate", problem("arm.toml"), "--out", out, "-n", 30000, "--quiet")
assert "coverage" in proc.stdout, proc.stdout
# A run of under a second states its time in milliseconds, one under ten seconds in tenths
# (never "in 0s" beside a rate).
took = re.search(r"evaluations\s+30,000 in (?:([1-9]\d*)ms|(\d\.\d)s) \(", proc.stdout)
assert took and (took.group(1) or float(took.group(2)) >= 1.0), proc.stdout
a = read_archive(os.path.join(out, "archive.h5"))
assert a["@format"] == "tessera-archive" and a["@format_version"] == 2
assert a["@problem"] == "arm" and a["@evaluations"] == 30000
g = a["elites/genome"]
n_joints = g.shape[1]
assert n_joints == 10
# Planar arm forward kinematics (README.md; standard robotics, e.g. Craig, Introduction to
# Robotics): p = sum_i (1/n)(cos a_i, sin a_i), a_i = theta_1 + ... + theta_i.
cum = np.cumsum(g, axis=1)
p = np.stack([np.cos(cum).sum(axis=1), np.sin(cum).sum(axis=1)], axis=1) / n_joints
np.testing.assert_allclose(a["elites/descriptor"], p, rtol=0, atol=1e-12)
# Fitness = -(population variance of the angles): numpy's var with ddof=0.
np.testing.assert_allclose(a["elites/fitness"], -np.var(g, axis=1), rtol=0, atol=1e-12)
# Cells: k_i = clamp(floor((d_i - lower_i)/(upper_i - lower_i) * res_i), 0, res_i - 1), row-major.
lo, hi, res = a["space/lower"], a["space/upper"], a["space/resolution"]
k = np.clip(np.floor((a["elites/descriptor"] - lo) / (hi - lo) * res), 0, res - 1).astype(np.int64)
np.testing.assert_array_equal(a["elites/cell"], k[:, 0] * res[1] + k[:, 1])
assert len(np.unique(a["elites/cell"])) == len(a["elites/cell"]), "two elites share a cell"
# QD-score of the last history row = sum(fitness - offset) (Pugh, Soros & Stanley 2016).
offset = a["history@fitness_floor"]
assert abs(offset - (-np.pi ** 2)) < 1e-15
np.testing.assert_allclose(a["history/qd_score"][-1], np.sum(a["elites/fitness"] - offset), rtol=1e-12)
np.testing.assert_allclose(a["history/coverage"][-1], len(g) / 10000.0, rtol=0, atol=0)
assert np.all(np.diff(a["history/qd_score"]) >= 0) and np.all(np.diff(a["history/coverage"]) >= 0)

# --- threads do not change the result ---------------------------------------------------------
one = os.path.join(work, "t1")
two = os.path.join(work, "t2")
run("illuminate", problem("arm.toml"), "--out", one, "-n", 20000, "--threads", 1, "--quiet")
run("illuminate", problem("arm.toml"), "--out", two, "-n", 20000, "--threads", 2, "--quiet")
assert_same_run(read_archive(os.path.join(one, "archive.h5")), read_archive(os.path.join(two, "archive.h5")))

# --- 1,000,000 evaluations: coverage above 0.70 ----------------------------------------------
# Geometry: the reachable disc (radius 1) covers pi/4 = 0.785 of the [-1, 1]^2 square; the
# ceiling is the number of grid cells that meet the disc (nearest point of the cell within 1).
big = os.path.join(work, "big")
run("illuminate", problem("arm.toml"), "--out", big, "-n", 1000000, "--quiet")
b = read_archive(os.path.join(big, "archive.h5"))
coverage = b["history/coverage"][-1]
edges = np.linspace(-1, 1, 101)
lo_edge, hi_edge = edges[:-1], edges[1:]
nearest = np.where(lo_edge > 0, lo_edge, np.where(hi_edge < 0, hi_edge, 0.0))
reachable = (nearest[:, None] ** 2 + nearest[None, :] ** 2 <= 1.0).sum() / 10000.0
print(f"coverage after 1,000,000 evaluations: {coverage:.4f} (cells meeting the disc: {reachable:.4f})")
assert 0.70 < coverage <= reachable, coverage

# --- an existing archive is not overwritten without --force -----------------------------------
before = open(os.path.join(out, "archive.h5"), "rb").read()
proc = run("illuminate", problem("arm.toml"), "--out", out, "-n", 1000, "--quiet", check=False)
assert proc.returncode == 2, proc.returncode
assert "already exists" in proc.stderr and len(proc.stderr.strip().splitlines()) == 1, proc.stderr
assert open(os.path.join(out, "archive.h5"), "rb").read() == before
print("ok")
