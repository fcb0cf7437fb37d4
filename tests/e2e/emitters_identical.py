# ctest-labels: emitters;mpi
# ctest-timeout: 900
"""Covariance-adapting emitters from the run file alone: a mixture (CMA-MAE, CMA-ME with random
directions, Iso+LineDD) and CMA-ME on the arm give bit-identical archives for 1 and 3 threads,
across a stop + `resume` (emitter states and acceptance thresholds in /resume), and under
`mpirun -n 3` (rank 0 searches, ranks 1-2 evaluate) equal to one process. Bad emitter keys are
refused in one line naming the file, line and key."""
import os
import subprocess
from tessera_test_util import TESSERA, run, problem, tempdir, read_archive, assert_same_run

work = tempdir()
small = ["--set", "problem.options.joints=12", "--set", "space.resolution=[32, 32]"]

# Stops fall on batch boundaries (600 and 540 candidates per batch).
for runfile, budget, stop in [("arm-mixture.toml", 20000, 6600), ("arm-cma-me.toml", 15000, 5400)]:
    label = runfile.replace(".toml", "")
    one = os.path.join(work, label + "-t1")
    three = os.path.join(work, label + "-t3")
    run("illuminate", problem(runfile), "--out", one, "-n", budget, "--threads", 1, "--quiet", *small)
    run("illuminate", problem(runfile), "--out", three, "-n", budget, "--threads", 3, "--quiet", *small)
    expected = read_archive(os.path.join(one, "archive.h5"))
    assert_same_run(expected, read_archive(os.path.join(three, "archive.h5")))
    emitter_keys = [k for k in expected if k.startswith("resume/arrays/emitter.")]
    assert len(emitter_keys) >= 15, emitter_keys
    if "cma-mae" in open(problem(runfile)).read():
        assert "resume/arrays/thresholds" in expected
        t = expected["resume/arrays/thresholds"]
        assert len(t) == len(expected["elites/fitness"]) and (t <= expected["elites/fitness"]).all()
    print(label, ": 1 and 3 threads identical")

    part = os.path.join(work, label + "-part")
    run("illuminate", problem(runfile), "--out", part, "-n", stop, "--threads", 2, "--quiet", *small)
    run("resume", os.path.join(part, "archive.h5"), "--evaluations", budget, "--threads", 1, "--quiet")
    assert_same_run(expected, read_archive(os.path.join(part, "archive.h5")))
    print(label, ": stop at", stop, "and resume identical")

# Refusals: one line, exit code 2, file and key named.
bad = os.path.join(work, "bad.toml")
for text, key in [
    ('[[search.emitters]]\nkind = "cma-xx"\n', "search.emitters[0].kind"),
    ('[[search.emitters]]\nkind = "cma-me"\nlearning_rate = 0.1\n', "search.emitters[0].learning_rate"),
    ('[[search.emitters]]\nkind = "cma-mae"\nlearning_rate = 2.0\n', "search.emitters[0].learning_rate"),
    ('[[search.emitters]]\nkind = "cma-me"\nsigma = 0\n', "search.emitters[0].sigma"),
    ('[search]\nbatch = 100\n[[search.emitters]]\nkind = "cma-me"\n', "search.batch"),
]:
    with open(bad, "w") as f:
        f.write('[problem]\nname = "arm"\n[space]\nresolution = 10\n' + text)
    proc = run("illuminate", bad, "--out", os.path.join(work, "bad-out"), "--quiet", check=False)
    assert proc.returncode == 2, (text, proc.returncode, proc.stderr)
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and bad in lines[0] and key in lines[0], (text, proc.stderr)
print("bad emitter keys refused")

version = run("--version").stdout
if "MPI evaluator: built in" not in version:
    raise SystemExit("this test needs a build with MPI: " + version)
env = dict(os.environ)
env.setdefault("OMPI_MCA_btl_vader_single_copy_mechanism", "none")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT", "1")
env.setdefault("OMPI_ALLOW_RUN_AS_ROOT_CONFIRM", "1")
env.setdefault("OMPI_MCA_rmaps_base_oversubscribe", "1")
spread = os.path.join(work, "mixture-mpi")
subprocess.run(["mpirun", "--oversubscribe", "-n", "3", TESSERA, "illuminate", problem("arm-mixture.toml"),
                "--out", spread, "-n", "20000", "--threads", "1", "--quiet", *small],
               check=True, env=env, timeout=600, capture_output=True)
assert_same_run(read_archive(os.path.join(work, "arm-mixture-t1", "archive.h5")),
                read_archive(os.path.join(spread, "archive.h5")))
print("mixture: mpirun -n 3 equals one process")
