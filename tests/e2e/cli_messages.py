# ctest-labels: cli
"""Messages and figures a new user meets first, each checked against something computed here:
command-line values are checked as command-line values (the message names the option, and the
largest seed is 2**63 - 1, the largest TOML integer, TOML 1.0 spec); an unknown run-file key gets
the nearest known key of its table (edit distance, Levenshtein 1966); after `resume` the rate
counts only the evaluations run by that process; out-of-bounds candidates are reported as kept
(clamped), with the count `inspect --format json` gives; `query` warns on stderr, in one line,
about a target outside the descriptor bounds (read with h5py); `front` marks descriptors that
sit at a bound (bounds read with h5py); `inspect` tells a trial log of `adapt --log` from an
archive."""
import json
import os
import re

import h5py
import numpy as np
from tessera_test_util import run, problem, tempdir, read_archive

work = tempdir()
os.environ["TESSERA_CACHE_DIR"] = work


def refused(*args, expect):
    proc = run(*args, check=False)
    assert proc.returncode == 2, (args, proc.returncode, proc.stdout, proc.stderr)
    assert expect in proc.stderr, (expect, proc.stderr)
    assert len(proc.stderr.strip().splitlines()) == 1, proc.stderr
    return proc.stderr


# --- command-line values ----------------------------------------------------------------------
out = os.path.join(work, "never")
refused("illuminate", problem("arm.toml"), "--out", out, "--evaluations", 0,
        expect="--evaluations 0: must be at least 1")
refused("illuminate", problem("arm.toml"), "--out", out, "--evaluations=-5",
        expect="--evaluations -5: must be at least 1")
message = refused("illuminate", problem("arm.toml"), "--out", out, "--seed=-1",
                  expect=f"--seed -1: must be an integer from 0 to {2**63 - 1}")
assert len(message) < 100, message
refused("illuminate", problem("arm.toml"), "--out", out, "--set", "search.evaluations=0",
        expect="--set search.evaluations=0: must be at least 1")
assert not os.path.exists(out), "a refused run left a folder behind"

# --- unknown run-file keys: the nearest known key of the same table ---------------------------
runfile = os.path.join(work, "typo.toml")
with open(runfile, "w") as f:
    f.write('[problem]\nname = "arm"\n[space]\nresolution = 10\n[novelty]\nneighbors = 5\n')
refused("illuminate", runfile, "--out", out,
        expect=f"{runfile}:6: key 'novelty.neighbors': unknown key (did you mean 'neighbours'?)")
with open(runfile, "w") as f:
    f.write('[problem]\nname = "arm"\n[space]\nresolution = 10\n[search]\nbudget = 5\n')
message = refused("illuminate", runfile, "--out", out, expect="key 'search.budget': unknown key")
assert "did you mean" not in message and "evaluations" in message, message  # lists the keys
refused("illuminate", problem("arm.toml"), "--out", out, "--set", "serch.batch=4",
        expect="unknown table [serch] (did you mean [search]?)")
# Inside [[search.emitters]]: the nearest key of the entry's kind, in the file and with --set
# (which addresses entry i as search.emitters[i]); "sigmaa" is one deletion from "sigma".
with open(runfile, "w") as f:
    f.write('[problem]\nname = "arm"\n[space]\nresolution = 10\n[[search.emitters]]\n'
            'kind = "cma-mae"\nsigmaa = 0.1\n')
refused("illuminate", runfile, "--out", out,
        expect=f"{runfile}:7: key 'search.emitters[0].sigmaa': unknown key for kind = "
               "\"cma-mae\" (did you mean 'sigma'?)")
refused("illuminate", problem("arm-cma-me.toml"), "--out", out, "--set",
        "search.emitters[0].sigmaa=0.1",
        expect="--set search.emitters[0].sigmaa=0.1: unknown key for kind = \"cma-me\" (did you "
               "mean 'sigma'?) (command-line value for ")
refused("illuminate", problem("arm-cma-me.toml"), "--out", out, "--set",
        "search.emitters[1].sigma=0.1",
        expect="--set search.emitters[1].sigma=0.1: the run file has 1 'emitters' entries, so no "
               "entry 1")
# A --set inside an entry reaches the run: the stored run file holds the new step size.
run("illuminate", problem("arm-cma-me.toml"), "--out", out, "-n", 1080, "--quiet", "--set",
    "search.emitters[0].sigma=0.125", "--set", "problem.options.joints=4")
with h5py.File(os.path.join(out, "archive.h5"), "r") as f:
    stored = f.attrs["config"]
stored = stored.decode() if isinstance(stored, bytes) else stored
assert re.search(r"sigma = 0\.125\b", stored), stored

# --- rates after resume -----------------------------------------------------------------------
arm = os.path.join(work, "arm")
run("illuminate", problem("arm.toml"), "--out", arm, "-n", 2048, "--quiet")
archive = os.path.join(arm, "archive.h5")
text = run("resume", archive, "-n", 4096, "--quiet").stdout
line = next(l for l in text.splitlines() if l.startswith("evaluations"))
# 2,048 run by this process, 2,048 before it: the rate divides the former by the time.
m = re.fullmatch(r"evaluations  4,096 \(2,048 run now in (\S+), (\S+)/s; 2,048 before\)", line)
assert m, line
text = run("resume", archive, "--quiet").stdout
assert "nothing was left to run" in text, text
refused("resume", archive, "--evaluations", 0, expect="--evaluations 0: must be at least 1")
refused("resume", archive, "--evaluations", 1024, expect="--evaluations 1024: ")

# --- clamped, not rejected; front marks values at a bound -------------------------------------
linkage = os.path.join(work, "linkage")
text = run("illuminate", problem("linkage-straight-line.toml"), "--out", linkage, "-n", 5000,
           "--quiet").stdout
assert "rejected" not in text, text
summary = json.loads(run("inspect", os.path.join(linkage, "archive.h5"), "--format",
                         "json").stdout)
clamped = summary["counts"]["out_of_bounds"]
assert clamped > 0
assert f"clamped      {clamped:,} with a descriptor outside the bounds (kept" in text, text
path = os.path.join(linkage, "archive.h5")
front = json.loads(run("front", path, "--objective", "fitness:max", "--objective",
                       "path_width:max", "--format", "json").stdout)["front"]
with h5py.File(path, "r") as f:
    lower, upper = f["space/lower"][()], f["space/upper"][()]
    names = [n.decode() if isinstance(n, bytes) else n for n in f["space/names"][()]]
marked = 0
for row in front:
    d = np.array(row["descriptor"])
    expected = [f"{names[i]}={'min' if d[i] == lower[i] else 'max'}"
                for i in range(len(d)) if d[i] == lower[i] or d[i] == upper[i]]
    assert row["at_bound"] == ",".join(expected), (row["at_bound"], d)
    marked += bool(expected)
assert any("straightness=max" in r["at_bound"] for r in front), "no clamped straightness marked"
print(f"front: {len(front)} elites, {marked} with a descriptor at a bound")

# --- query: a target outside the bounds gets one line of warning on stderr --------------------
proc = run("query", archive, "--target=1.5,0.2")
assert proc.stderr.count("\n") == 1 and "warning" in proc.stderr, proc.stderr
assert "x = 1.5 lies outside [-1, 1], the descriptor bounds" in proc.stderr, proc.stderr
assert run("query", archive, "--target=0.5,0.2").stderr == ""

# --- inspect on a trial log -------------------------------------------------------------------
log = os.path.join(work, "trials.h5")
run("adapt", archive, "--on", problem("arm-damage-stuck.toml"), "--log", log)
text = run("inspect", log).stdout
assert "trial log of `tessera adapt --log`" in text, text
with h5py.File(log, "r") as f:
    trials = f["trials/measured"].shape[0]
    chosen = int(f["trials"].attrs["chosen"])
    cell = int(f["trials/cell"][chosen])
assert f"trials        {trials} of at most 20" in text, text
assert f"choice        trial {chosen + 1}, cell {cell}" in text, text
refused("inspect", log, "--format", "json", expect="a trial log of `tessera adapt --log`")
print("cli_messages: ok")
