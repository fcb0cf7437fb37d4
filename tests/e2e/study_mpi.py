# ctest-labels: studies;mpi;slow
# ctest-timeout: 900
"""`mpirun -n 3 tessera study` spreads whole runs over the ranks (each rank runs its share as
plain single-process runs) and rank 0 takes the measures: the same measures.csv as the study run
in one process, and every run's archive identical (h5py, bit for bit)."""
import os
import subprocess
import sys

from tessera_test_util import TESSERA, SOURCE, run, tempdir, read_archive, assert_same_run

work = tempdir()
env = dict(os.environ)
# Open MPI in containers: no ptrace-based single copy; running as root needs both variables.
env.setdefault("OMPI_MCA_btl_vader_single_copy_mechanism", "none")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT", "1")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT_CONFIRM", "1")
env.setdefault("OMPI_MCA_rmaps_base_oversubscribe", "1")
version = run("--version").stdout
assert "MPI evaluator: built in" in version, "this test needs a build with MPI: " + version
study = os.path.join(work, "arm.toml")
text = open(os.path.join(SOURCE, "problems", "studies", "arm-operators.toml")).read()
text = text.replace("replicates = 5 ", "replicates = 3 ").replace("search.evaluations = 20000",
                                                                  "search.evaluations = 6000")
with open(study, "w") as f:
    f.write(text.replace('run = "../arm.toml"', f'run = "{os.path.join(SOURCE, "problems", "arm.toml")}"'))

alone = os.path.join(work, "alone")
run("study", study, "--out", alone, "--jobs", 1, "--threads", 2, "--quiet")
spread = os.path.join(work, "spread")
proc = subprocess.run(["mpirun", "--oversubscribe", "-n", "3", TESSERA, "study", study, "--out", spread,
                       "--jobs", "1", "--threads", "1"], capture_output=True, text=True, timeout=600, env=env)
sys.stdout.write(proc.stdout + proc.stderr)
assert proc.returncode == 0, proc.returncode
assert open(os.path.join(alone, "measures.csv")).read() == open(os.path.join(spread, "measures.csv")).read()
for label in ("iso-line-dd", "gaussian"):
    for seed in (1, 2, 3):
        path = os.path.join("runs", label, f"seed-{seed}", "archive.h5")
        assert_same_run(read_archive(os.path.join(alone, path)), read_archive(os.path.join(spread, path)))
print("study under mpirun: ok")
