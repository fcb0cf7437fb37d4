# ctest-labels: studies
"""A study killed outright (SIGKILL, which it cannot catch and pass on) takes its runs with it:
no run goes on writing into the folder that the next call of the same command continues (two
writers of one run at once). Checked for a run started afresh (`illuminate`) and for one the next
call continued from its checkpoint (`resume`)."""
import os
import signal
import subprocess
import time

from tessera_test_util import TESSERA, alive, children, tempdir, write_long_study

work = tempdir()
study = os.path.join(work, "long.toml")
# One run far longer than the test: it is in flight whenever the study is killed.
write_long_study(study, "search.batch = 500, checkpoint.every_evaluations = 5000")
out = os.path.join(work, "out")
archive = os.path.join(out, "runs", "arm", "seed-1", "archive.h5")


def kill_and_check(extra):
    study_proc = subprocess.Popen([TESSERA, "study", study, "--out", out, "--jobs", "1",
                                   "--threads", "1", "--quiet", *extra],
                                  stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.time() + 120
    kids = []
    while time.time() < deadline and not (kids and os.path.exists(archive)):
        assert study_proc.poll() is None, study_proc.communicate()
        kids = children(study_proc.pid)
        time.sleep(0.02)
    assert kids and os.path.exists(archive), "the run never checkpointed"
    study_proc.kill()
    study_proc.communicate()
    deadline = time.time() + 10
    while time.time() < deadline and any(alive(p) for p in kids):
        time.sleep(0.01)
    outlived = [p for p in kids if alive(p)]
    for p in outlived:  # leave nothing running behind the test
        os.kill(p, signal.SIGKILL)
    assert not outlived, f"run process(es) {outlived} outlived the killed study by 10 s"


kill_and_check([])  # the run started afresh (illuminate)
kill_and_check([])  # the run continued from its checkpoint (resume)
print("study killed: its runs stopped with it")
