# ctest-labels: arena
"""Arena runs through the command line: run-file-relative layout paths, --set search.algorithm
for every population search, resume and thread counts bit-identical for novelty search, the
report's arena drawing, and
`tessera transfer` of an archive into the larger maze: per-elite rows match a second evaluation,
the summary's quartiles equal numpy.percentile (linear interpolation, numpy's default) of the
per-elite values, and the *_time figures count the elites that reached each place."""
import json
import os
import shutil
import subprocess

import numpy as np
from tessera_test_util import TESSERA, run, problem, tempdir, read_archive, assert_same_run

work = tempdir()

# A copy of the run file and arenas elsewhere, run from yet another folder: the layout path
# resolves against the run file's folder, and the archive stores it absolute.
shutil.copytree(os.path.join(os.path.dirname(problem("arena-open.toml")), "arenas"),
                os.path.join(work, "arenas"))
shutil.copy(problem("arena-open.toml"), work)
shutil.copy(problem("arena-maze.toml"), work)
runfile = os.path.join(work, "arena-open.toml")
small = ["--set", "search.batch=50", "--set", "novelty.window=500", "--quiet"]

for algorithm in ("novelty", "novelty-lc", "objective", "random"):
    out = os.path.join(work, algorithm)
    run("illuminate", runfile, "--out", out, "-n", 1000, "--threads", 2,
        "--set", f"search.algorithm={algorithm}", *small, cwd="/")
    a = read_archive(os.path.join(out, "archive.h5"))
    assert a["space@kind"] == "unstructured", algorithm
    n = len(a["elites/fitness"])
    assert n > 0 and (a["elites/cell"] == np.arange(n)).all(), algorithm
    assert os.path.join(work, "arenas", "open.txt") in a["@config"], a["@config"]
    assert a["history/evaluations"][-1] == 1000

# Resume equals one go, with different thread counts on either side.
whole = os.path.join(work, "whole")
run("illuminate", runfile, "--out", whole, "-n", 2000, "--threads", 1, *small)
split = os.path.join(work, "split")
run("illuminate", runfile, "--out", split, "-n", 1000, "--threads", 2, *small)
run("resume", os.path.join(split, "archive.h5"), "-n", 2000, "--threads", 2, "--quiet")
assert_same_run(read_archive(os.path.join(whole, "archive.h5")),
                read_archive(os.path.join(split, "archive.h5")))

# The report draws the arena's scene: its 4 border walls, every elite's final position, the
# paths of the 5 best.
report = os.path.join(work, "report")
run("report", os.path.join(whole, "archive.h5"), "--out", report)
panels = [f for f in os.listdir(report) if "scene-arena" in f and f.endswith(".svg")]
assert len(panels) == 1, os.listdir(report)
svg = open(os.path.join(report, panels[0])).read()
assert svg.count('stroke="#222" stroke-width="2.5"') == 4
assert svg.count('stroke-width="1.4"') == 5  # one thin path per traced elite
elite_count = len(read_archive(os.path.join(whole, "archive.h5"))["elites/fitness"])
assert "the final position of every elite (%d)" % elite_count in svg
assert "arena" in open(os.path.join(report, "index.html")).read().lower()

# Transfer into the maze.
archive = os.path.join(whole, "archive.h5")
maze = os.path.join(work, "arena-maze.toml")
doc = json.loads(run("transfer", archive, "--to", maze, "--format", "json", "-j", 2).stdout)
elites = doc["elites"]
stored = read_archive(archive)
assert len(elites) == len(stored["elites/fitness"]) == doc["evaluated"]
assert doc["problem"] == "arena" and doc["source_problem"] == "arena"
summary = {f["figure"]: f for f in doc["summary"]}
for figure in ("fitness", "path_length", "area_covered"):
    values = np.array([e[figure] for e in elites])
    q1, med, q3 = np.percentile(values, [25, 50, 75])
    assert np.isclose(summary[figure]["q1"], q1, rtol=1e-12, atol=0), (figure, summary[figure], q1)
    assert np.isclose(summary[figure]["median"], med, rtol=1e-12, atol=0), figure
    assert np.isclose(summary[figure]["q3"], q3, rtol=1e-12, atol=0), figure
marks = [name for name in elites[0] if name.endswith("_time")]
assert "goal_time" in marks and "first_turn_time" in marks, marks
for name in marks:
    times = np.array([e[name] for e in elites])
    reached = times[times >= 0]
    assert summary[name]["reached"] == len(reached), name
    if len(reached):
        assert np.isclose(summary[name]["median"], np.percentile(reached, 50), rtol=1e-12), name
    else:
        assert summary[name]["median"] is None, name
# Every elite moved in the maze's units: area covered is a share, path length bounded by speed.
for e in elites:
    assert 0 < e["area_covered"] <= 1 and 0 <= e["path_length"] <= 80.0 + 1e-9

# CSV rows equal the JSON rows; --sample draws the same elites for the same seed.
csv_text = run("transfer", archive, "--to", maze, "--format", "csv").stdout.splitlines()
header = csv_text[0].split(",")
assert header[:4] == ["elite", "source_fitness", "valid", "fitness"], header
row = dict(zip(header, csv_text[5].split(",")))
assert float(row["fitness"]) == elites[4]["fitness"]
assert float(row["path_length"]) == elites[4]["path_length"]
s1 = json.loads(run("transfer", archive, "--to", maze, "--sample", 7, "--format", "json").stdout)
s2 = json.loads(run("transfer", archive, "--to", maze, "--sample", 7, "--format", "json").stdout)
picked = [e["elite"] for e in s1["elites"]]
assert len(picked) == 7 and picked == sorted(set(picked)) and s1 == s2
for e in s1["elites"]:
    assert e == elites[e["elite"]]
text = run("transfer", archive, "--to", maze, "--summary").stdout
assert "first_turn_time" in text and "median" in text

# Bad input: one line naming the file, exit 2.
def refused(args, expected):
    proc = subprocess.run([TESSERA, *map(str, args)], capture_output=True, text=True)
    assert proc.returncode == 2, (args, proc.returncode, proc.stderr)
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and expected in lines[0], (args, proc.stderr)

refused(["transfer", archive, "--to", maze, "--set", "problem.options.hidden=3"],
        f"{archive}: its elites have 57 parameters, but problem 'arena'")
refused(["transfer", os.path.join(work, "missing.h5"), "--to", maze], "missing.h5: no such file")
bad = os.path.join(work, "bad.toml")
with open(bad, "w") as f:
    f.write('[problem]\nname = "arena"\n[problem.options]\nlayout = "arenas/none.txt"\n'
            '[space]\nresolution = 10\n[search]\nalgorithm = "novelty"\n')
refused(["illuminate", bad, "--out", os.path.join(work, "bad")], "arenas/none.txt: cannot open")
with open(bad, "w") as f:
    f.write('[problem]\nname = "arena"\n[space]\nresolution = 10\n[novelty]\nneighbors = 10\n')
refused(["illuminate", bad, "--out", os.path.join(work, "bad")],
        f"{bad}:6: key 'novelty.neighbors': unknown key")
with open(bad, "w") as f:
    f.write('[problem]\nname = "arena"\n[space]\nresolution = 10\n[search]\nalgorithm = "novel"\n')
refused(["illuminate", bad, "--out", os.path.join(work, "bad")], "unknown algorithm 'novel'")
with open(bad, "w") as f:
    f.write('[problem]\nname = "arena"\n[space]\nresolution = 10\n[novelty]\nlower = 1.5\n')
refused(["illuminate", bad, "--out", os.path.join(work, "bad")], "key 'novelty.lower'")
print("ok")
