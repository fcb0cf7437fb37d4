# ctest-labels: archive;slow
# ctest-timeout: 3600
"""Interruption at any moment: a run is interrupted with SIGINT, SIGTERM and SIGKILL at 20 random
moments each (checkpoints every ~20 ms, so many land during a checkpoint write), then resumed;
a moment that falls after the run's end is drawn again. Each time: the archive opens, no
temporary file is left after the resume, SIGINT/SIGTERM exit 130/143 with a checkpoint, and
the resumed result equals the uninterrupted run bit for bit (for SIGKILL too: a resume restarts
from the last complete checkpoint, and checkpoints are exact). Then `adapt --log` is interrupted
the same way: the trial log always opens and holds whole trials. Set TESSERA_INTERRUPTS=N for
another number of moments per signal."""
import os
import random
import signal
import subprocess
import time
import h5py
from tessera_test_util import (TESSERA, assert_same_run, problem, read_archive, run, tempdir,
                               wait_for_handler)

work = tempdir()
rng = random.Random()
seed = rng.randrange(1 << 30)
print("random seed of this test:", seed)
rng.seed(seed)
moments = int(os.environ.get("TESSERA_INTERRUPTS", "20"))

budget = 1000000
extra = ["--set", "search.batch=500", "--set", "checkpoint.every_seconds=0.02", "--seed", "11",
         "--quiet"]
whole = os.path.join(work, "whole")
started = time.perf_counter()
run("illuminate", problem("arm.toml"), "--out", whole, "-n", budget, *extra)
# Moments are drawn over the run's own length (less its start-up), so that most land inside it
# however fast this build and machine are.
span = 0.9 * (time.perf_counter() - started)
print(f"uninterrupted run: {span / 0.9:.2f} s; moments drawn in [0, {span:.2f}] s")
expected = read_archive(os.path.join(whole, "archive.h5"))


def temporaries(folder):
    # A run killed before it made its output folder left nothing anywhere.
    return [n for n in os.listdir(folder) if ".tmp-" in n] if os.path.isdir(folder) else []


results = {}
for sig in (signal.SIGINT, signal.SIGTERM, signal.SIGKILL):
    passed = 0
    finished_first = 0
    # A moment after the run's end interrupts nothing: it is drawn again (at most `moments`
    # times in all), so that the count is of real interruptions.
    for k in range(2 * moments):
        if passed == moments:
            break
        out = os.path.join(work, f"{sig.name}-{k}")
        proc = subprocess.Popen([TESSERA, "illuminate", problem("arm.toml"), "--out", out, "-n",
                                 str(budget), "--threads", str(rng.choice([1, 2])), *extra],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        wait_for_handler(proc)
        began = time.perf_counter()
        time.sleep(rng.uniform(0.0, span))
        proc.send_signal(sig)
        _, err = proc.communicate(timeout=300)
        archive = os.path.join(out, "archive.h5")
        if proc.returncode == 0:
            # The first run may have been slowed by a passing load: the span shrinks to any run
            # that ends sooner, so that the moments stay inside the runs.
            span = min(span, 0.9 * (time.perf_counter() - began))
            print(sig.name, k, f"finished before the signal; another moment is drawn in [0, "
                  f"{span:.2f}] s")
            finished_first += 1
            continue
        elif sig == signal.SIGKILL:
            assert proc.returncode == -signal.SIGKILL, (proc.returncode, err)
        else:
            want = 130 if sig == signal.SIGINT else 143
            assert proc.returncode == want, (sig.name, proc.returncode, err)
        if not os.path.exists(archive):
            # Killed before the first checkpoint completed: nothing to resume; a run started
            # again in that folder removes the dead writer's temporary file and ends the same.
            assert sig == signal.SIGKILL, (sig.name, err)
            print(sig.name, k, "killed before the first checkpoint; temporaries:", temporaries(out))
            run("illuminate", problem("arm.toml"), "--out", out, "-n", budget, *extra)
            assert not temporaries(out), temporaries(out)
            assert_same_run(expected, read_archive(archive))
            passed += 1
            continue
        run("inspect", archive)  # the archive opens whatever the moment
        run("resume", archive, "--quiet", "--threads", rng.choice([1, 2]))
        assert not temporaries(out), temporaries(out)
        assert_same_run(expected, read_archive(archive))
        passed += 1
    results[sig.name] = passed
    print(f"{sig.name}: {passed}/{moments} runs interrupted mid-run resumed bit-identical "
          f"({finished_first} moments fell after the run's end and were drawn again)")

# adapt --log: the trial log is rewritten after every trial; interrupt it anywhere.
source = os.path.join(work, "whole", "archive.h5")
damage = problem("arm-damage-stuck.toml")
log_passed = 0
for k in range(moments):
    sig = rng.choice([signal.SIGINT, signal.SIGTERM, signal.SIGKILL])
    log = os.path.join(work, f"adapt-{k}.h5")
    proc = subprocess.Popen([TESSERA, "adapt", source, "--on", damage, "--log", log, "--format",
                             "json", "--max-trials", "40"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    wait_for_handler(proc)
    time.sleep(rng.uniform(0.0, 0.5))
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=300)
    assert proc.returncode in (0, 130, 143, -signal.SIGKILL), (proc.returncode, err)
    leftovers = lambda: [n for n in os.listdir(work) if n.startswith(f".adapt-{k}.h5.tmp")]
    if sig == signal.SIGKILL and leftovers():
        # Killed mid-write: the next writer of that log removes the dead writer's file.
        run("adapt", source, "--on", damage, "--log", log, "--format", "json", "--max-trials", 2)
    assert not leftovers(), (sig.name, leftovers())
    if os.path.exists(log):
        with h5py.File(log, "r") as f:  # opens, and every dataset reads whole
            f.visititems(lambda name, obj: obj[()] if isinstance(obj, h5py.Dataset) else None)
        run("inspect", log, check=False)  # must not crash or hang on a trial log
        log_passed += 1
    else:
        log_passed += 1  # stopped before the first trial: no log, nothing half-written
print(f"adapt --log: {log_passed}/{moments} interruptions left a readable log or none")
assert all(v == moments for v in results.values()) and log_passed == moments
