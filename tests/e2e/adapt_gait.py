# ctest-labels: adaptation;slow
# ctest-timeout: 900
"""Recovery after damage for the MuJoCo walker: a small repertoire of the intact robot
(5,000 evaluations over 500 CVT cells, built here), then `tessera adapt` on each shipped damage
case (problems/gait-damage-*.toml). The reference is brute force: every elite of the repertoire
re-evaluated under the damage (`tessera transfer`, the simulation itself, no search). Each case
must be one where the intact robot's best gait really fails (walks at most half as far), and
the adapted choice must end within 0.15 m (the tolerance the run files state) of the best elite
under the damage, within the trial budget; `adapt --brute-force` must report that same best.
The first trial is the intact robot's best elite (h5py finds it; it is the UCB choice while
every sigma is equal). Skipped only when the build has no MuJoCo."""
import csv
import glob
import io
import json
import os
import sys

import numpy as np
from tessera_test_util import run, problem, tempdir, read_archive

binary_dir = os.environ.get("TESSERA_BINARY_DIR", "")
plugin_dir = os.environ.get("TESSERA_PLUGIN_PATH", os.path.join(binary_dir, "plugins"))
if not os.path.exists(os.path.join(plugin_dir, "tessera-plugin-gait.so")):
    cache = open(os.path.join(binary_dir, "CMakeCache.txt")).read()
    wanted = "TESSERA_WITH_MUJOCO:BOOL=ON" in cache and "mujoco_DIR-NOTFOUND" not in cache \
        and "mujoco_DIR:PATH=" in cache
    if wanted:
        sys.exit("MuJoCo was found but the gait plugin was not built")
    print("gait plugin not built (no MuJoCo in this build): skipped")
    sys.exit(0)

work = tempdir()
os.environ["TESSERA_CACHE_DIR"] = work
run("illuminate", problem("gait.toml"), "--out", work, "-n", 5000, "--seed", 1, "--quiet",
    "--set", "space.cells=500", "--set", "space.samples=50000")
archive = os.path.join(work, "archive.h5")
a = read_archive(archive)
best = int(np.argmax(a["elites/fitness"]))
intact_best = float(a["elites/fitness"][best])
print(f"repertoire: {len(a['elites/fitness'])} elites, best walks {intact_best:.3f} m in 3 s")
assert intact_best > 0.3, "the repertoire should hold a gait that walks"

cases = sorted(glob.glob(problem("gait-damage-*.toml")))
assert len(cases) >= 3, cases
TOLERANCE = 0.15  # metres in 3 s, stated in each damage run file
for case in cases:
    name = os.path.basename(case)
    # Brute force: every elite under the damage.
    rows = list(csv.DictReader(io.StringIO(run("transfer", archive, "--to", case, "--format",
                                               "csv").stdout)))
    damaged = np.array([float(r["fitness"]) if r["valid"] == "1" else -np.inf for r in rows])
    assert len(damaged) == len(a["elites/fitness"])
    brute_best = float(damaged.max())
    log = os.path.join(work, name + ".h5")
    result = json.loads(run("adapt", archive, "--on", case, "--format", "json", "--log", log,
                            "--brute-force").stdout)
    trials = result["trials"]
    assert result["prior"] == "map fitness"
    assert 1 <= len(trials) <= result["settings"]["max_trials"] == 20
    assert result["trials_used"] == len(trials)
    # First trial: the intact robot's best elite, with the map's fitness as its prior.
    assert trials[0]["elite"] == best and trials[0]["cell"] == a["elites/cell"][best]
    assert trials[0]["prior"] == intact_best
    baseline = trials[0]["measured"]
    assert abs(baseline - damaged[best]) < 1e-9, (baseline, damaged[best])
    chosen = result["choice"]["measured"]
    assert chosen == max(t["measured"] for t in trials)
    assert abs(result["brute_force"]["best"] - brute_best) < 1e-9, result["brute_force"]
    print(f"{name}: intact best {intact_best:.3f} m -> {baseline:.3f} m with the damage; adapted "
          f"{chosen:.3f} m after {len(trials)} trials; brute-force best {brute_best:.3f} m (gap "
          f"{brute_best - chosen:.3f}); stop: {result['stop_reason']}")
    assert baseline <= 0.5 * intact_best, f"{name}: the intact best gait does not really fail"
    assert chosen >= brute_best - TOLERANCE, f"{name}: not within {TOLERANCE} m of the best"
    assert os.path.exists(log)
print("adapt_gait: ok")
