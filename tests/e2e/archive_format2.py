# ctest-labels: archive
# ctest-timeout: 600
"""Archive format 2 (docs/archive-format.md) read with h5py (Debian python3-h5py):

1. A linkage run keeps every elite's extra figures under the problem's names, and the values are
   those of the four-bar's closed form, recomputed here with numpy from the stored genome: the
   transmission angle mu (between coupler and rocker) has its extremes where the crank lines up
   with the ground link, cos mu = (b^2 + c^2 - (d -+ a)^2) / (2 b c) (Norton, Design of
   Machinery, ch. 4, transmission angle of a crank-rocker), and the fitness is
   90 - max |mu - 90| (the plugin's definition, plugins/linkage/linkage_plugin.cpp).
   query --within, front --objective and transfer's source_* columns read the stored figures.
2. Population searches (novelty, objective, random) store the map of the reference grid as
   /elites: the best behaviour per cell over everything evaluated, rebuilt here with numpy from a
   log the worker wrote of every evaluation; their novelty archive is in /novelty_archive.
3. A format newer than the build is refused by every command in one line naming file and version.
"""
import json
import math
import os
import shutil
import subprocess

import h5py
import numpy as np
from tessera_test_util import TESSERA, SOURCE, run, problem, tempdir

work = tempdir()
failures = []


def check(condition, what):
    if not condition:
        failures.append(what)
        print("FAIL:", what)


# --- 1. extras of a linkage run --------------------------------------------------------------
link_dir = os.path.join(work, "linkage")
run("illuminate", problem("linkage-compact.toml"), "--out", link_dir, "-n", 3000,
    "--set", "search.batch=300", "--threads", 2, "--quiet")
link = os.path.join(link_dir, "archive.h5")
listing = json.loads(run("problems", "--format", "json").stdout)
linkage_names = next(p["extra_names"] for p in listing["problems"] if p["name"] == "linkage")
with h5py.File(link, "r") as f:
    check(int(f.attrs["format_version"]) == 2, "linkage: format_version 2")
    names = [x.decode("utf-8") for x in f["elites/extra_names"][...]]
    extras = f["elites/extras"][...]
    genome = f["elites/genome"][...]
    fitness = f["elites/fitness"][...]
    floor = float(f["history"].attrs["fitness_floor"])
check(names == linkage_names, f"linkage: extra names {names} are the problem's {linkage_names}")
check(extras.shape == (len(fitness), len(names)), "linkage: extras [N, E]")
column = {n: i for i, n in enumerate(names)}
reason, mu_min, mu_max = (extras[:, column[n]] for n in ("infeasible_reason", "mu_min", "mu_max"))
feasible = reason == 0
check(feasible.sum() > 10, f"linkage: the run found feasible elites ({feasible.sum()})")
d, a, b, c = genome[:, 0], genome[:, 1], genome[:, 2], genome[:, 3]  # ground, crank, coupler, rocker
want_min = np.degrees(np.arccos(np.clip((b * b + c * c - (d - a) ** 2) / (2 * b * c), -1, 1)))
want_max = np.degrees(np.arccos(np.clip((b * b + c * c - (d + a) ** 2) / (2 * b * c), -1, 1)))
check(np.allclose(mu_min[feasible], want_min[feasible], atol=1e-9),
      "linkage: stored mu_min is the closed-form extreme")
check(np.allclose(mu_max[feasible], want_max[feasible], atol=1e-9),
      "linkage: stored mu_max is the closed-form extreme")
worst = np.maximum(np.abs(mu_min - 90), np.abs(mu_max - 90))
check(np.allclose(fitness[feasible], 90 - worst[feasible], atol=1e-9),
      "linkage: fitness = 90 - max |mu - 90| from the stored extras")
check(np.all(fitness >= floor), "linkage: fitness above the floor")

# inspect shows the best elite's extras.
j = json.loads(run("inspect", link, "--format", "json").stdout)
best = int(np.argmax(fitness))
check(j["archive_format"] == 2 and j["extra_names"] == names, "linkage: inspect header")
check(j["best"]["extras"] == extras[best].tolist(), "linkage: inspect best extras")

# query --within on a stored figure keeps exactly the elites numpy keeps.
lo, hi = 60.0, 80.0
inside = set(np.nonzero((mu_min >= lo) & (mu_min <= hi))[0].tolist())
check(len(inside) > 0, "linkage: some elites have mu_min in [60, 80]")
q = json.loads(run("query", link, "--target=60,60", "--k", len(fitness), "--within",
                   f"mu_min={lo}:{hi}", "--format", "json").stdout)
with h5py.File(link, "r") as f:
    cells = f["elites/cell"][...].tolist()
got = {cells.index(m["cell"]) for m in q["matches"]}
check(got == inside, f"linkage: query --within mu_min keeps {len(got)} of {len(inside)}")
check(all(m["extras"] == extras[cells.index(m["cell"])].tolist() for m in q["matches"]),
      "linkage: query rows carry the stored extras")

# front on (fitness max, mu_max min) equals the non-dominated set computed with numpy.
fr = json.loads(run("front", link, "--objective", "fitness:max", "--objective", "mu_max:min",
                    "--format", "json").stdout)
pts = np.stack([fitness, mu_max], axis=1)
dominated = [any((pts[k, 0] >= pts[i, 0] and pts[k, 1] <= pts[i, 1]) and
                 (pts[k, 0] > pts[i, 0] or pts[k, 1] < pts[i, 1]) for k in range(len(pts)))
             for i in range(len(pts))]
want_front = {i for i in range(len(pts)) if not dominated[i]}
check({cells.index(r["cell"]) for r in fr["front"]} == want_front,
      "linkage: front over a stored figure is the numpy Pareto set")

# transfer into the same problem: the stored figures (source_*) are the figures a fresh
# evaluation gives, since the linkage is deterministic.
t = json.loads(run("transfer", link, "--to", problem("linkage-compact.toml"), "--format", "json",
                   "-j", 2).stdout)
for e in t["elites"]:
    row = e["elite"]
    for n in ("mu_min", "mu_max", "infeasible_reason"):
        check(e["source_" + n] == extras[row, column[n]] and e[n] == e["source_" + n],
              f"linkage: transfer source_{n} of elite {row}")
summary = {s["figure"]: s for s in t["summary"]}
check(summary["mu_max"]["source_median"] == summary["mu_max"]["median"],
      "linkage: transfer summary source median")

# --- 2. population searches store the reference map as /elites --------------------------------
worker = os.path.join(SOURCE, "tests", "fixtures", "workers", "logging_arm_worker.py")
for algorithm in ("novelty", "objective", "random"):
    folder = os.path.join(work, algorithm)
    os.makedirs(folder)
    log = os.path.join(folder, "evaluations.jsonl")
    runfile = os.path.join(folder, "run.toml")
    with open(runfile, "w") as out:
        out.write(f"""[problem]
kind = "process"
name = "arm-logged"
command = ["/usr/bin/python3", "{worker}", "{log}"]
workers = 1
genome_lower = [-3.141592653589793, -3.141592653589793, -3.141592653589793, -3.141592653589793]
genome_upper = [3.141592653589793, 3.141592653589793, 3.141592653589793, 3.141592653589793]
descriptor_lower = [-1.0, -1.0]
descriptor_upper = [1.0, 1.0]
descriptor_names = ["x", "y"]
fitness_lower = -9.869604401089358
fitness_upper = 0.0

[space]
kind = "grid"
resolution = [10, 10]

[search]
algorithm = "{algorithm}"
evaluations = 800
batch = 100
seed = 3
operator = "gaussian"
""")
    run("illuminate", runfile, "--out", os.path.join(folder, "out"), "--threads", 2, "--quiet")
    entries = [json.loads(line) for line in open(log)]
    check(len(entries) == 800, f"{algorithm}: the worker logged every evaluation")
    g = np.array([e["genome"] for e in entries])
    fit = np.array([e["fitness"] for e in entries])
    desc = np.array([e["descriptor"] for e in entries])
    # Grid cell, docs/archive-format.md, written out with numpy.
    k = np.clip(np.floor((desc + 1.0) / 2.0 * 10), 0, 9).astype(np.int64)
    cell = k[:, 0] * 10 + k[:, 1]
    best_of = {}
    for i in range(len(fit)):
        if cell[i] not in best_of or fit[i] > fit[best_of[cell[i]]]:
            best_of[cell[i]] = i
    path = os.path.join(folder, "out", "archive.h5")
    with h5py.File(path, "r") as f:
        check(f["space"].attrs["kind"] == "grid" and f["space/resolution"][...].tolist() == [10, 10],
              f"{algorithm}: /space is the reference grid")
        stored_cells = f["elites/cell"][...]
        stored = {int(c): i for i, c in enumerate(stored_cells)}
        check(set(stored) == set(best_of), f"{algorithm}: filled cells are those evaluated")
        same = all(f["elites/fitness"][stored[c]] == fit[i] and
                   np.array_equal(f["elites/genome"][stored[c]], g[i]) and
                   np.array_equal(f["elites/descriptor"][stored[c]], desc[i])
                   for c, i in best_of.items())
        check(same, f"{algorithm}: each cell holds the best behaviour evaluated there")
        nov = f["novelty_archive"]
        m = nov["fitness"].shape[0]
        check(m > 0 and nov["genome"].shape == (m, 4), f"{algorithm}: /novelty_archive rows")
        logged = {tuple(row) for row in g.tolist()}
        check(all(tuple(row) in logged for row in nov["genome"][...].tolist()),
              f"{algorithm}: novelty archive rows were evaluated")
        hist_cov = float(f["history/coverage"][-1])
        hist_qd = float(f["history/qd_score"][-1])
    j = json.loads(run("inspect", path, "--format", "json").stdout)
    # The history sums the QD-score as it goes (improvements add their gain), inspect sums the
    # stored elites: the same figure up to rounding.
    check(j["coverage"] == hist_cov and math.isclose(j["qd_score"], hist_qd, rel_tol=1e-12),
          f"{algorithm}: inspect coverage {j['coverage']} and QD-score {j['qd_score']} equal "
          f"the run's last history row ({hist_cov}, {hist_qd})")
    check(j["max_fitness"] == float(fit.max()), f"{algorithm}: the best behaviour is in /elites")
    check(j["novelty_archive"] == m, f"{algorithm}: inspect counts the novelty archive")

# --- 3. a newer format is refused by every command, in one line -------------------------------
newer = os.path.join(work, "newer.h5")
shutil.copy(link, newer)
with h5py.File(newer, "r+") as f:
    f.attrs["format_version"] = np.int64(3)
before = open(newer, "rb").read()
commands = [["inspect", newer], ["query", newer, "--target=50,50"],
            ["front", newer, "--objective", "fitness:max", "--objective", "mu_max:min"],
            ["report", newer, "--out", os.path.join(work, "report-newer")],
            ["transfer", newer, "--to", problem("linkage-compact.toml")],
            ["resume", newer]]
for args in commands:
    p = subprocess.run([TESSERA, *args], capture_output=True, text=True)
    lines = p.stderr.strip().splitlines()
    check(p.returncode == 2 and len(lines) == 1 and newer in lines[0] and "format 3" in lines[0],
          f"{args[0]} refuses a newer format in one line (rc {p.returncode}: {p.stderr.strip()})")
check(open(newer, "rb").read() == before, "the newer file is left untouched")

shutil.rmtree(work, ignore_errors=True)
if failures:
    print(f"{len(failures)} checks failed")
    raise SystemExit(1)
print("all checks passed")
