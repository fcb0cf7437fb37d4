# ctest-labels: studies;slow
# ctest-timeout: 1800
"""Interruption of `tessera study` at any moment: a tiny study (the arm: Iso+LineDD and its
matched random control, 2 seeds, 20,000 evaluations a run, --jobs 2, checkpoints every ~20 ms)
is interrupted with SIGINT, SIGTERM and SIGKILL at 20 random moments each: while runs are in
flight (many during a checkpoint write), between runs (a run ended, the next not yet started),
and while the measures are taken (every fifth moment is the first free slot with runs left,
every fifth one the first checkpoint write seen); then the same command is run again. A moment after the
study's end is drawn again. Each time:
- SIGINT/SIGTERM while runs are left: the study stops with 130/143, no run is left running and
  no temporary file is left; once the runs are done the study finishes its measures and ends
  with 0 (README, "Studies");
- SIGKILL: the study's runs die with it (none goes on writing into the folder);
- every archive there opens (h5py reads every dataset);
- after the second call: every run has its done marker and no failed one, no temporary file is
  left anywhere under --out, and measures.csv and every archive (datasets and attributes) equal
  the uninterrupted study's bit for bit -- for SIGKILL too, since runs resume from their last
  complete checkpoint and checkpoints are exact (README, "Resuming"; a dead writer's temporary
  file is removed by the next writer).
The report folder is not compared (every call that takes the measures writes it again).
Set TESSERA_INTERRUPTS=N for another number of moments per signal."""
import os
import random
import signal
import subprocess
import time

from tessera_test_util import (TESSERA, SOURCE, alive, assert_same_run, children, read_archive,
                               run, tempdir, wait_for_handler)

work = tempdir()
rng = random.Random()
seed = rng.randrange(1 << 30)
print("random seed of this test:", seed)
rng.seed(seed)
moments = int(os.environ.get("TESSERA_INTERRUPTS", "20"))

arm = os.path.join(SOURCE, "problems", "arm.toml")
common = """search.evaluations = 20000
search.batch = 500
checkpoint.every_seconds = 0.02
"""
study = os.path.join(work, "tiny.toml")
with open(study, "w") as f:
    f.write(f"""[study]
name = "tiny"
replicates = [3, 8]
reference = "iso-line-dd"

[[treatment]]
label = "iso-line-dd"
run = "{arm}"
[treatment.set]
search.operator = "iso-line-dd"
{common}
[[treatment]]
label = "matched"
matched = "iso-line-dd"
run = "{arm}"
[treatment.set]
{common}
[[measure]]
kind = "final"
figures = ["qd_score"]
""")
runs = [(label, s) for label in ("iso-line-dd", "matched") for s in (3, 8)]
flags = ["--jobs", "2", "--threads", "1", "--quiet"]


def run_dir(out, label, s):
    return os.path.join(out, "runs", label, f"seed-{s}")


def temporaries(out):
    """Files a writer makes before renaming them into place (archives, measures, the plan)."""
    found = []
    for folder, _, files in os.walk(out):
        found += [os.path.join(folder, n) for n in files
                  if ".tmp-" in n or n.startswith("study-plan.txt.")]
    return found


def phase(out, kids):
    """Where the study is: the runs in flight, a free slot with runs left, a checkpoint write."""
    left = sum(not os.path.exists(os.path.join(run_dir(out, l, s), "done")) for l, s in runs)
    if left == 0 and not kids:
        return "measures"
    where = f"{len(kids)} run(s) in flight"
    if left < len(runs) and len(kids) < min(2, left):  # a run ended, its slot not yet refilled
        where += ", between runs"
    if any(".archive.h5.tmp-" in t for t in temporaries(out)):
        where += ", checkpoint write"
    return where




def start(out):
    """The study started and catching signals; and when it began to."""
    proc = subprocess.Popen([TESSERA, "study", study, "--out", out, *flags],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    wait_for_handler(proc)
    return proc, time.perf_counter()


# The uninterrupted study. Moments are drawn over its length from the signal handler on, and the
# span shrinks to any study that ends before its moment, so that most moments land inside it
# however fast this build and machine are.
whole = os.path.join(work, "whole")
proc, began = start(whole)
out, err = proc.communicate(timeout=300)
assert proc.returncode == 0, (out, err)
span = 0.95 * (time.perf_counter() - began)
print(f"uninterrupted study: {span / 0.95:.2f} s from its signal handler on")
expected_csv = open(os.path.join(whole, "measures.csv"), "rb").read()
expected = {r: read_archive(os.path.join(run_dir(whole, *r), "archive.h5")) for r in runs}
assert not temporaries(whole), temporaries(whole)

results = {}
for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGKILL):
    passed, redrawn, phases = 0, 0, {}
    for k in range(2 * moments):
        if passed == moments:
            break
        out = os.path.join(work, f"{sig.name}-{k}")
        proc, began = start(out)
        wanted = ["between runs", "checkpoint write", None, None, None][k % 5]
        if wanted is None:
            time.sleep(rng.uniform(0.0, span))
            kids = children(proc.pid)
            where = phase(out, kids)
        else:
            # Every fifth moment waits for a free slot with runs left, every fifth for a
            # checkpoint being written, so that both are always among the moments.
            while proc.poll() is None:
                kids = children(proc.pid)
                where = phase(out, kids)
                if wanted in where:
                    break
                time.sleep(0.001)
        if proc.poll() is not None:
            _, err = proc.communicate()
            assert proc.returncode == 0, (proc.returncode, err)
            span = min(span, 0.95 * (time.perf_counter() - began))
            print(sig.name, k, f"finished before the signal; another moment is drawn in [0, "
                  f"{span:.2f}] s")
            redrawn += 1
            continue
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=300)
        if proc.returncode == 0:
            # Once the runs are done the study finishes its measures: the stop request is
            # noted (a second one would stop it at once) and the output is whole.
            assert sig != signal.SIGKILL
            where += ", then completed"
            assert not temporaries(out), (sig.name, where, temporaries(out))
        elif sig == signal.SIGKILL:
            assert proc.returncode == -signal.SIGKILL, (proc.returncode, err)
            # A killed study takes its runs with it: none goes on writing into the folder
            # that the next call continues.
            deadline = time.time() + 2
            while time.time() < deadline and any(alive(p) for p in kids):
                time.sleep(0.01)
            assert not any(alive(p) for p in kids), f"runs outlived the killed study ({where})"
        else:
            want = 130 if sig == signal.SIGINT else 143
            assert proc.returncode == want, (sig.name, where, proc.returncode, err)
            assert not any(alive(p) for p in kids), f"runs outlived the stopped study ({where})"
            assert not temporaries(out), (sig.name, where, temporaries(out))
        phases[where] = phases.get(where, 0) + 1
        for label, s in runs:  # whatever the moment, every archive there opens
            archive = os.path.join(run_dir(out, label, s), "archive.h5")
            if os.path.exists(archive):
                read_archive(archive)
        run("study", study, "--out", out, *flags)
        assert not temporaries(out), (sig.name, where, temporaries(out))
        for r in runs:
            d = run_dir(out, *r)
            assert os.path.exists(os.path.join(d, "done")), (sig.name, where, d)
            assert not os.path.exists(os.path.join(d, "failed")), (sig.name, where, d)
            # The matched control's stored run file names its source archive, in its own --out.
            want = dict(expected[r], **{"@config": expected[r]["@config"].replace(whole, out)})
            assert_same_run(want, read_archive(os.path.join(d, "archive.h5")))
        assert open(os.path.join(out, "measures.csv"), "rb").read() == expected_csv, \
            (sig.name, where, "measures.csv differs")
        passed += 1
    results[sig.name] = passed
    print(f"{sig.name}: {passed}/{moments} interrupted studies continued bit-identical "
          f"({redrawn} moments fell after the end and were drawn again); moments: {phases}")
assert all(v == moments for v in results.values()), results
