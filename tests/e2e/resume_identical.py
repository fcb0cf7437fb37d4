# ctest-labels: archive
"""Interrupt-and-resume equals the uninterrupted run, bit for bit (elites, fitness, history), for
a grid and a CVT archive: (1) a plain stop at a budget boundary then `resume --evaluations N`;
(2) a real SIGINT at a random moment, exit code 130, then resume. Thread counts differ on purpose
between the pieces: the result must not depend on them."""
import os
import random
import signal
import subprocess
import time
from tessera_test_util import TESSERA, run, problem, tempdir, read_archive, assert_same_run

work = tempdir()
rng = random.Random()
seed = rng.randrange(1 << 30)
print("random seed of this test:", seed)
rng.seed(seed)

cases = [
    # (run file, extra settings, budget, stop budget on a batch boundary)
    ("arm.toml", ["--set", "search.batch=500"], 40000, 15000),
    ("arm-cvt.toml", ["--set", "search.batch=500", "--set", "space.cells=200"], 40000, 20000),
]

for runfile, extra, budget, stop in cases:
    label = runfile.replace(".toml", "")
    whole = os.path.join(work, label + "-whole")
    run("illuminate", problem(runfile), "--out", whole, "-n", budget, "--threads", 2, "--quiet", *extra)
    expected = read_archive(os.path.join(whole, "archive.h5"))

    # (1) stop at a budget boundary, resume to the full budget.
    part = os.path.join(work, label + "-part")
    run("illuminate", problem(runfile), "--out", part, "-n", stop, "--threads", 1, "--quiet", *extra)
    run("resume", os.path.join(part, "archive.h5"), "--evaluations", budget, "--threads", 2, "--quiet")
    assert_same_run(expected, read_archive(os.path.join(part, "archive.h5")))
    print(label, "stop-and-resume: identical")

# (2) a real SIGINT at a random moment, on a run long enough to be caught mid-way.
budget = 3000000
extra = ["--set", "search.batch=256", "--set", "checkpoint.every_seconds=0.05"]
whole = os.path.join(work, "sigint-whole")
run("illuminate", problem("arm.toml"), "--out", whole, "-n", budget, "--quiet", *extra)
expected = read_archive(os.path.join(whole, "archive.h5"))
interrupted = os.path.join(work, "sigint-part")
proc = subprocess.Popen([TESSERA, "illuminate", problem("arm.toml"), "--out", interrupted, "-n",
                         str(budget), "--quiet", *extra], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
# Wait until tessera's handler is in place (the dynamic loader's start-up before main can take
# a few tenths of a second on a busy machine), then pick the moment.
deadline = time.time() + 60
while time.time() < deadline and proc.poll() is None:
    with open(f"/proc/{proc.pid}/status") as status:
        caught = int(next(l for l in status if l.startswith("SigCgt:")).split()[1], 16)
    if caught & (1 << (signal.SIGINT - 1)):
        break
    time.sleep(0.005)
time.sleep(rng.uniform(0.1, 1.2))
proc.send_signal(signal.SIGINT)
out, err = proc.communicate(timeout=120)
if proc.returncode == 0:
    print("the run finished before the signal; resume is then a no-op")
else:
    assert proc.returncode == 130, (proc.returncode, err)
    assert "checkpoint written to" in err and "tessera resume" in err, err
    partial = read_archive(os.path.join(interrupted, "archive.h5"))
    assert 0 < partial["@evaluations"] < budget
    print("interrupted at", partial["@evaluations"], "evaluations")
    run("resume", os.path.join(interrupted, "archive.h5"), "--quiet")
assert_same_run(expected, read_archive(os.path.join(interrupted, "archive.h5")))
print("SIGINT and resume: identical")
