# ctest-labels: studies;slow
# ctest-timeout: 900
"""The measures beyond the history, on a tiny arena study (novelty and its matched random control,
2 seeds): (1) the matched control's elites take, parameter by parameter, only values that the
same parameter has in the novelty run's final elites (per-parameter resampling, checked with
h5py); (2) the probe (best 20 elites re-evaluated in the maze) equals a recomputation with numpy
from `tessera transfer --format json`; (3) re-adaptation equals the first /history row (h5py)
where the max fitness reached the threshold, or the budget marked censored; (4) success is
max fitness >= threshold."""
import csv
import json
import os

import tomllib

import h5py
import numpy as np
from tessera_test_util import SOURCE, run, tempdir

work = tempdir()
problems = os.path.join(SOURCE, "problems")
studies = os.path.join(problems, "studies")
budget, threshold, best = 600, -0.75, 20
# A goal place close to the start, so that some re-adaptations reach it within the budget.
layout = open(os.path.join(studies, "arenas", "maze-middle.txt")).read().replace("goal 10 17 0.75", "goal 2 6 0.75")
with open(os.path.join(work, "maze-near.txt"), "w") as f:
    f.write(layout)
near_run = open(os.path.join(studies, "arena-maze-middle.toml")).read().replace(
    '"arenas/maze-middle.txt"', '"maze-near.txt"')
with open(os.path.join(work, "arena-maze-near.toml"), "w") as f:
    f.write(near_run)
study = os.path.join(work, "arena-tiny.toml")
with open(study, "w") as f:
    f.write(f"""
[study]
replicates = [1, 2]
[[treatment]]
label = "novelty"
run = "{problems}/arena-deceptive.toml"
set = {{ search.algorithm = "novelty", search.evaluations = 2000 }}
[[treatment]]
label = "matched"
matched = "novelty"
run = "{problems}/arena-deceptive.toml"
set = {{ search.evaluations = 2000 }}
[[measure]]
kind = "success"
threshold = {threshold}
[[measure]]
kind = "probe"
name = "maze"
run = "{problems}/arena-maze.toml"
best = {best}
figures = ["area_covered", "path_length"]
places = ["first_turn", "middle", "goal"]
[[measure]]
kind = "readapt"
name = "maze"
threshold = {threshold}
budget = {budget}
places = {{ middle = "{studies}/arena-maze-middle.toml", near = "{work}/arena-maze-near.toml" }}
""")
out = os.path.join(work, "out")
proc = run("study", study, "--out", out, "--jobs", 2, "--threads", 1)
print(proc.stdout)
rows = {(r["group"], r["run"], r["measure"]): r for r in csv.DictReader(open(os.path.join(out, "measures.csv")))}


def archive(label, seed, sub=""):
    return os.path.join(out, "runs", label, f"seed-{seed}", sub, "archive.h5")


reached = 0
for seed in (1, 2):
    # (1) Matched random control: per-parameter resampling of novelty's elites.
    with h5py.File(archive("novelty", seed), "r") as f:
        source = f["elites/genome"][()]
    with h5py.File(archive("matched", seed), "r") as f:
        drawn = f["elites/genome"][()]
        config = f.attrs["config"]
        config = config.decode() if isinstance(config, bytes) else config
    search = tomllib.loads(config)["search"]
    assert search["algorithm"] == "random" and search["start_draw"] == "resample", config
    assert drawn.shape[1] == source.shape[1] and len(drawn) > 0
    for p in range(source.shape[1]):
        assert np.isin(drawn[:, p], source[:, p]).all(), f"parameter {p}: a value novelty never had"
    # Not whole rows copied: most drawn genomes are no row of the source.
    rows_of_source = {tuple(r) for r in source}
    assert sum(tuple(r) in rows_of_source for r in drawn) < len(drawn) / 2

    for label in ("novelty", "matched"):
        key = (label, f"seed-{seed}")
        # (2) Probe against transfer + numpy.
        answer = json.loads(run("transfer", archive(label, seed), "--to",
                                os.path.join(problems, "arena-maze.toml"), "--format", "json").stdout)
        elites = answer["elites"]
        order = sorted(range(len(elites)), key=lambda i: -elites[i]["source_fitness"])  # stable
        chosen = [elites[i] for i in order[:best]]
        valid = [e for e in chosen if e["valid"] == 1]
        for figure in ("area_covered", "path_length"):
            expected = float(np.median([e[figure] for e in valid]))  # numpy's default percentile
            got = float(rows[key + (f"probe.maze.{figure}",)]["value"])
            assert abs(got - expected) <= 1e-12 * max(1.0, abs(expected)), (figure, got, expected)
        for place in ("first_turn", "middle", "goal"):
            expected = np.mean([e[f"{place}_time"] >= 0 for e in valid])
            got = float(rows[key + (f"probe.maze.reached.{place}",)]["value"])
            assert abs(got - expected) < 1e-12, (place, got, expected)
        # (3) Re-adaptation from the history of each re-adaptation run.
        for place in ("middle", "near"):
            with h5py.File(archive(label, seed, f"readapt-maze-{place}"), "r") as f:
                evals = f["history/evaluations"][()]
                maxfit = f["history/max_fitness"][()]
                cfg = f.attrs["config"]
                cfg = cfg.decode() if isinstance(cfg, bytes) else cfg
            search = tomllib.loads(cfg)["search"]
            assert search["start_from"] == archive(label, seed), cfg
            assert search["stop_fitness"] == threshold and search["evaluations"] == budget, cfg
            hit = np.nonzero(maxfit >= threshold)[0]
            r = rows[key + (f"readapt.maze.{place}",)]
            if len(hit):
                reached += 1
                assert float(r["value"]) == float(evals[hit[0]]) and r["censored"] == "0", r
                assert hit[0] == len(evals) - 1, "the run went on after reaching the goal"
            else:
                assert float(r["value"]) == budget and r["censored"] == "1", r
                assert evals[-1] == budget
        # (4) Success.
        with h5py.File(archive(label, seed), "r") as f:
            success = 1.0 if f["history/max_fitness"][-1] >= threshold else 0.0
        assert float(rows[key + ("success",)]["value"]) == success
assert reached > 0, "no re-adaptation reached its goal: the uncensored case went untested"
print("study arena measures: ok,", reached, "re-adaptations reached their goal")
