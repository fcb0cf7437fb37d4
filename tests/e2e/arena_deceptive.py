# ctest-labels: slow
# ctest-timeout: 900
"""The deceptive arena does its job: with the same run file and budget, novelty search
(Lehman & Stanley, EC 2011) brings the robot to the goal in at least 4 of 5 seeds, the objective
control in at most 1. A run reaches the goal when its best robot ends within the goal zone (0.75 m
radius): max fitness (minus the final distance) >= -0.75. Only --set search.algorithm differs
between the runs. Each run is 20,000 evaluations (a few seconds on two cores)."""
import os

import h5py
from tessera_test_util import run, problem, tempdir

work = tempdir()
GOAL_RADIUS = 0.75  # problems/arenas/deceptive.txt
reached = {}
for algorithm in ("novelty", "objective"):
    reached[algorithm] = []
    for seed in range(1, 6):
        out = os.path.join(work, f"{algorithm}-{seed}")
        run("illuminate", problem("arena-deceptive.toml"), "--out", out, "--seed", seed,
            "--set", f"search.algorithm={algorithm}", "--threads", 2, "--quiet")
        with h5py.File(os.path.join(out, "archive.h5"), "r") as f:
            assert f["space"].attrs["kind"] == "grid"  # the reference map
            assert f["/resume"].attrs["algorithm"] == algorithm
            assert f.attrs["evaluations"] == 20000
            best = float(f["history/max_fitness"][-1])
        reached[algorithm].append(best >= -GOAL_RADIUS)
        print(f"{algorithm} seed {seed}: best final distance {-best:.3f} m")

print("goal reached:", {a: sum(r) for a, r in reached.items()})
assert sum(reached["novelty"]) >= 4, reached
assert sum(reached["objective"]) <= 1, reached
