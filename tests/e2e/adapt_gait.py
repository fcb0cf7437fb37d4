# ctest-labels: adaptation;slow
# ctest-timeout: 900
"""Recovery after damage for the MuJoCo walker: a small repertoire of the intact robot
(5,000 evaluations over 500 CVT cells, built here), then `tessera adapt` on each shipped damage
case (problems/gait-damage-*.toml). The first trial is the intact robot's best elite (h5py finds
it; it is the UCB choice while every sigma is equal), measured on the damaged robot. In at least
three damage cases the adapted choice must walk clearly farther on the damaged robot (at least
0.1 m more in 3 s and 25% more) within the trial budget. Every case is printed with the trials
used and the fraction recovered. (A small repertoire sometimes holds a best gait that the damage
barely hurts, so nothing needs recovering: with five shipped cases, at least three recovered
clearly for each of the seeds 1-4 when this test was written.)
Skipped only when the build has no MuJoCo."""
import glob
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
recovered = []
for case in cases:
    name = os.path.basename(case)
    log = os.path.join(work, name + ".h5")
    result = json.loads(run("adapt", archive, "--on", case, "--format", "json", "--log",
                            log).stdout)
    trials = result["trials"]
    assert result["prior"] == "map fitness"
    assert 1 <= len(trials) <= result["settings"]["max_trials"] == 20
    # First trial: the intact robot's best elite, with the map's fitness as its prior.
    assert trials[0]["elite"] == best and trials[0]["cell"] == a["elites/cell"][best]
    assert trials[0]["prior"] == intact_best
    baseline = trials[0]["measured"]
    chosen = result["choice"]["measured"]
    assert chosen == max(t["measured"] for t in trials)
    gain = chosen - baseline
    lost = intact_best - baseline
    print(f"{name}: {len(trials)} trials; intact best on the damaged robot {baseline:.3f} m -> "
          f"adapted {chosen:.3f} m ({chosen / intact_best:.0%} of the intact best's "
          f"{intact_best:.3f} m; fraction of the loss recovered "
          f"{gain / lost if lost > 0 else float('nan'):.2f}); stop: {result['stop_reason']}")
    if gain >= 0.1 and (baseline <= 0 or chosen >= 1.25 * baseline):
        recovered.append(name)
    assert os.path.exists(log)
print(f"clearly recovered: {len(recovered)} of {len(cases)} damage cases")
assert len(recovered) >= 3, "fewer than three damage cases recovered clearly"
print("adapt_gait: ok")
