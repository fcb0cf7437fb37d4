# ctest-labels: studies
"""Ctrl-C on a terminal signals the whole foreground process group. A study's runs must still get
the stop request once (from the study), and so checkpoint after the batch in flight and stop, as
README "Studies" says; a second request would make them stop at once, losing the work since
their last checkpoint. The run here has no periodic checkpoint and long batches, so a run
stopped at once leaves no archive at all."""
import os
import signal
import subprocess
import time

import h5py
from tessera_test_util import TESSERA, catches_sigint, children, tempdir, write_long_study

work = tempdir()
study = os.path.join(work, "long.toml")
write_long_study(study, "search.batch = 200000, checkpoint.every_seconds = 3600")
out = os.path.join(work, "out")
run_folder = os.path.join(out, "runs", "arm", "seed-1")


# Its own session stands for the terminal's foreground process group.
proc = subprocess.Popen([TESSERA, "study", study, "--out", out, "--jobs", "1", "--threads", "1"],
                        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                        start_new_session=True)
deadline = time.time() + 120
while time.time() < deadline:
    assert proc.poll() is None, proc.communicate()
    kids = children(proc.pid)
    if catches_sigint(proc.pid) and kids and all(catches_sigint(k) for k in kids):
        break
    time.sleep(0.01)
time.sleep(0.5)  # a few batches in: the run has work to lose
os.killpg(proc.pid, signal.SIGINT)  # what the terminal does on Ctrl-C
_, err = proc.communicate(timeout=300)
log = open(os.path.join(run_folder, "log.txt")).read()
assert proc.returncode == 130, (proc.returncode, err, log)
assert "stopped at once" not in log, log
archive = os.path.join(run_folder, "archive.h5")
assert os.path.exists(archive), f"the run stopped without its checkpoint: {log}"
with h5py.File(archive, "r") as f:
    evaluations = int(f.attrs["evaluations"])
assert evaluations > 0 and evaluations % 200000 == 0, evaluations
print(f"Ctrl-C: the run checkpointed {evaluations} evaluations and stopped")
