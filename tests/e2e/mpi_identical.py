# ctest-labels: mpi
# ctest-timeout: 900
"""MPI-distributed evaluation gives the same archive as one process: `mpirun -n 3` (rank 0
coordinates, ranks 1-2 evaluate) against a single-process run, for the arm and for a problem with
deliberately uneven evaluation times (sleepy-arm). Then a rank killed mid-run: the job stops, the
last checkpoint reads back, and `mpirun ... tessera resume` finishes identically."""
import glob
import os
import signal
import subprocess
import time
from tessera_test_util import TESSERA, SOURCE, run, problem, tempdir, read_archive, assert_same_run

binary_dir = os.environ["TESSERA_BINARY_DIR"]
env = dict(os.environ)
env["TESSERA_PLUGIN_PATH"] = os.environ["TESSERA_PLUGIN_PATH"] + ":" + os.path.join(binary_dir, "tests", "plugins")
# Open MPI in containers: no ptrace-based single copy; running as root needs both variables.
env.setdefault("OMPI_MCA_btl_vader_single_copy_mechanism", "none")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT", "1")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT_CONFIRM", "1")
env.setdefault("OMPI_MCA_rmaps_base_oversubscribe", "1")
MPIRUN = ["mpirun", "--oversubscribe", "-n", "3"]

version = run("--version").stdout
assert "MPI evaluator: built in" in version, "this test needs a build with MPI: " + version


def tessera(*args, mpi=False, check=True, **kw):
    cmd = (MPIRUN if mpi else []) + [TESSERA] + [str(a) for a in args]
    proc = subprocess.run(cmd, capture_output=True, text=True, env=env, timeout=600, **kw)
    if check and proc.returncode != 0:
        raise AssertionError(f"{' '.join(cmd)} exited {proc.returncode}:\n{proc.stdout}\n{proc.stderr}")
    return proc


work = tempdir()
sleepy = os.path.join(SOURCE, "tests", "fixtures", "sleepy-arm.toml")
for label, runfile, extra in [
    ("arm", problem("arm.toml"), ["-n", 30000, "--set", "search.batch=512"]),
    ("sleepy", sleepy, []),
]:
    single = os.path.join(work, label + "-single")
    spread = os.path.join(work, label + "-mpi")
    tessera("illuminate", runfile, "--out", single, "--threads", 2, "--quiet", *extra)
    tessera("illuminate", runfile, "--out", spread, "--threads", 1, "--quiet", *extra, mpi=True)
    assert_same_run(read_archive(os.path.join(single, "archive.h5")),
                    read_archive(os.path.join(spread, "archive.h5")))
    print(label, ": mpirun -n 3 equals one process")

# --- a rank killed mid-run ------------------------------------------------------------------
budget = 12000
extra = ["--set", f"search.evaluations={budget}", "--set", "checkpoint.every_seconds=0.2"]
whole = os.path.join(work, "kill-whole")
tessera("illuminate", sleepy, "--out", whole, "--quiet", *extra)
expected = read_archive(os.path.join(whole, "archive.h5"))

victim_dir = os.path.join(work, "kill-mpi")
archive = os.path.join(victim_dir, "archive.h5")
job = subprocess.Popen(MPIRUN + [TESSERA, "illuminate", sleepy, "--out", victim_dir, "--quiet",
                                 "--threads", "1", *extra],
                       stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)


def evaluator_rank_pid():
    """The pid of the tessera process whose MPI rank is 1 (read from its environment)."""
    for environ in glob.glob("/proc/[0-9]*/environ"):
        try:
            data = open(environ, "rb").read().split(b"\0")
            cmdline = open(environ.replace("environ", "cmdline"), "rb").read()
        except OSError:
            continue
        if b"OMPI_COMM_WORLD_RANK=1" in data and victim_dir.encode() in cmdline:
            return int(environ.split("/")[2])
    return None


deadline = time.time() + 120
while not os.path.exists(archive) and time.time() < deadline and job.poll() is None:
    time.sleep(0.05)
assert os.path.exists(archive), "no checkpoint appeared"
time.sleep(0.3)
pid = evaluator_rank_pid()
assert pid is not None and job.poll() is None, "job finished before a rank could be killed"
os.kill(pid, signal.SIGKILL)
out, err = job.communicate(timeout=120)
assert job.returncode != 0, "the job should stop when a rank dies"
partial = read_archive(archive)  # the last checkpoint is intact
assert 0 < partial["@evaluations"] < budget, partial["@evaluations"]
print("rank 1 killed; checkpoint holds", partial["@evaluations"], "evaluations")
tessera("resume", archive, "--quiet", "--threads", 1, mpi=True)
assert_same_run(expected, read_archive(archive))
print("resume under mpirun after a rank died: identical")
