# ctest-labels: studies;slow
# ctest-timeout: 900
"""A tiny study (arm: Iso+LineDD against Gaussian, 3 seeds, from problems/studies/arm-operators.toml)
run by `tessera study`: (1) interrupted with SIGINT while runs are in flight and resumed with the
same command, it redoes no finished run and ends with the same measures.csv as an uninterrupted
study; (2) every run equals a single `tessera illuminate` run with the same run file, overrides and
seed, dataset for dataset (h5py, bit for bit); (3) measures.csv agrees with figures recomputed
from the archives with h5py."""
import csv
import os
import signal
import subprocess
import time

import h5py
from tessera_test_util import TESSERA, SOURCE, run, tempdir, read_archive, assert_same_run

work = tempdir()
shipped = os.path.join(SOURCE, "problems", "studies", "arm-operators.toml")
# The shipped study with 3 seeds and runs long enough to interrupt (checkpoints every 2 batches).
text = open(shipped).read()
text = text.replace("replicates = 5 ", "replicates = 3 ")
budget = 40000
text = text.replace("search.evaluations = 20000", f"search.evaluations = {budget}\n"
                    "checkpoint.every_evaluations = 1000")
assert "replicates = 3" in text and text.count(f"evaluations = {budget}") == 2
study = os.path.join(work, "arm-operators.toml")
with open(study, "w") as f:
    f.write(text.replace('run = "../arm.toml"', f'run = "{os.path.join(SOURCE, "problems", "arm.toml")}"'))

labels = ["iso-line-dd", "gaussian"]
seeds = [1, 2, 3]


def run_dir(out, label, seed):
    return os.path.join(out, "runs", label, f"seed-{seed}")


# (1) Uninterrupted study.
whole = os.path.join(work, "whole")
proc = run("study", study, "--out", whole, "--jobs", 2, "--threads", 1)
print(proc.stdout)

# Interrupted study: SIGINT once one run is finished and another has a checkpoint but no done
# marker (the wait is on files, never on time).
cut = os.path.join(work, "cut")
child = subprocess.Popen([TESSERA, "study", study, "--out", cut, "--jobs", "2", "--threads", "1"],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
deadline = time.time() + 600
while time.time() < deadline:
    dirs = [run_dir(cut, l, s) for l in labels for s in seeds]
    done = [d for d in dirs if os.path.exists(os.path.join(d, "done"))]
    partial = []  # checkpointed, at most half way: it cannot finish before the signal lands
    for d in dirs:
        if os.path.exists(os.path.join(d, "archive.h5")) and not os.path.exists(os.path.join(d, "done")):
            try:
                with h5py.File(os.path.join(d, "archive.h5"), "r") as f:
                    if int(f.attrs["evaluations"]) <= budget // 2:
                        partial.append(d)
            except OSError:
                pass  # replaced while being opened; look again
    if done and partial:
        break
    if child.poll() is not None:
        break
    time.sleep(0.05)
assert child.poll() is None, "the study ended before it could be interrupted"
child.send_signal(signal.SIGINT)
out, err = child.communicate(timeout=300)
assert child.returncode == 130, (child.returncode, err)
assert "continue with the same command" in err, err
assert not os.path.exists(os.path.join(cut, "measures.csv"))

finished = {}
interrupted = []
for l in labels:
    for s in seeds:
        d = run_dir(cut, l, s)
        if os.path.exists(os.path.join(d, "done")):
            st = os.stat(os.path.join(d, "archive.h5"))
            finished[d] = (st.st_ino, st.st_mtime_ns)
        elif os.path.exists(os.path.join(d, "archive.h5")):
            with h5py.File(os.path.join(d, "archive.h5"), "r") as f:
                assert int(f.attrs["evaluations"]) < budget
            interrupted.append(d)
assert finished and interrupted, (finished, interrupted)

proc = run("study", study, "--out", cut, "--jobs", 2, "--threads", 1)
print(proc.stdout)
assert f"{len(finished)} done before" in proc.stdout, proc.stdout
for d, stamp in finished.items():  # not redone: the very same file, untouched
    st = os.stat(os.path.join(d, "archive.h5"))
    assert (st.st_ino, st.st_mtime_ns) == stamp, f"{d} was redone"
for d in interrupted:  # continued from its checkpoint, not restarted
    log = open(os.path.join(d, "log.txt")).read()
    assert "interrupted after" in log, log

a = open(os.path.join(whole, "measures.csv")).read()
b = open(os.path.join(cut, "measures.csv")).read()
assert a == b, "measures.csv differs after interrupt + resume"

# (2) Each run equals `tessera illuminate` with the treatment's overrides and the seed.
settings = {"iso-line-dd": ["--set", 'search.operator="iso-line-dd"'],
            "gaussian": ["--set", 'search.operator="gaussian"', "--set", "search.sigma=0.05"]}
for l in labels:
    for s in seeds:
        alone = os.path.join(work, f"alone-{l}-{s}")
        run("illuminate", os.path.join(SOURCE, "problems", "arm.toml"), "--out", alone, "--seed", s,
            "--quiet", "--threads", 2, *settings[l], "--set", f"search.evaluations={budget}",
            "--set", "search.batch=500", "--set", "checkpoint.every_evaluations=1000")
        expected = read_archive(os.path.join(alone, "archive.h5"))
        for out in (whole, cut):
            assert_same_run(expected, read_archive(os.path.join(run_dir(out, l, s), "archive.h5")))

# (3) measures.csv against the archives read with h5py: one row per run and measure.
rows = list(csv.DictReader(open(os.path.join(whole, "measures.csv"))))
assert len(rows) == len(labels) * len(seeds) * 4, len(rows)
for r in rows:
    with h5py.File(os.path.join(run_dir(whole, r["group"], int(r["run"][5:])), "archive.h5"), "r") as f:
        last = {k: f["history"][k][-1] for k in ("coverage", "qd_score", "max_fitness")}
    expected = {"coverage": last["coverage"], "qd_score": last["qd_score"],
                "max_fitness": last["max_fitness"],
                "success": 1.0 if last["max_fitness"] >= -0.05 else 0.0}[r["measure"]]
    assert float(r["value"]) == float(expected), (r, expected)  # %.17g round-trips exactly
    assert r["censored"] == "0"
print("study resume: ok")
