# ctest-labels: cli;resources
"""Requests that cannot work are refused at once, in one line naming the file or option and what
to change, exit 2, nothing written: archives that are not regular files, missing or folder run
files, seeds above 2^63-1, absurd thread counts and CVT sizes (refused before allocating), a
tournament that would never end a batch, `initial = 0`, an output folder the archive cannot be
written to (found before the search, not after it). And a SIGINT in the first instant ends in a
checkpoint (exit 130), never in a bare kill."""
import os
import random
import signal
import subprocess
import time
from tessera_test_util import TESSERA, run, problem, tempdir

work = tempdir()


def refused(*args, expect, timeout=60):
    proc = run(*args, check=False, timeout=timeout)
    lines = proc.stderr.strip().splitlines()
    assert proc.returncode == 2, (args, proc.returncode, proc.stderr)
    assert len(lines) == 1, ("not one line", args, proc.stderr)
    for text in expect:
        assert text in lines[0], (text, lines[0])
    return lines[0]


# A named pipe blocked every command forever (the open waits for a writer).
fifo = os.path.join(work, "pipe.h5")
os.mkfifo(fifo)
for command in (["inspect", fifo], ["resume", fifo], ["query", fifo, "--target", "0,0"]):
    refused(*command, expect=[fifo, "not a regular file"], timeout=30)

# Run files: missing, a folder.
refused("illuminate", os.path.join(work, "nope.toml"), "--out", os.path.join(work, "o1"),
        expect=["nope.toml", "no such run file"])
os.mkdir(os.path.join(work, "folder.toml"))
refused("illuminate", os.path.join(work, "folder.toml"), "--out", os.path.join(work, "o2"),
        expect=["folder.toml", "is a folder"])

# Seeds are stored as TOML integers (at most 2^63-1): a larger one was silently clamped.
proc = run("illuminate", problem("arm.toml"), "--out", os.path.join(work, "o3"), "-n", 100,
           "--seed", 2**63, check=False)
assert proc.returncode == 2 and "9223372036854775807" in proc.stderr, proc.stderr
assert not os.path.exists(os.path.join(work, "o3", "archive.h5"))

# --threads -1 became 2^64-1 threads and ended in "internal error: std::bad_alloc".
refused("illuminate", problem("arm.toml"), "--out", os.path.join(work, "o4"), "-n", 100,
        "--threads", -1, expect=["--threads", "up to 1024"])

# Thread creation failing under a memory limit aborted with "terminate called" (exit 134).
# AddressSanitizer reserves terabytes of address space for its shadow memory, so a sanitized
# build (scripts/run-sanitized-tests sets TESSERA_SANITIZED) cannot start under any address-space
# limit at all (common practice: ASan and `ulimit -v` do not mix); the case runs in the plain build.
def limit_memory():
    import resource
    resource.setrlimit(resource.RLIMIT_AS, (600 << 20, 600 << 20))
if os.environ.get("TESSERA_SANITIZED") == "1":
    print("address-space limit case left out: sanitized build")
else:
    proc = subprocess.run([TESSERA, "illuminate", problem("arm.toml"), "--out",
                           os.path.join(work, "o5"), "-n", "2000", "--threads", "64", "--quiet"],
                          capture_output=True, text=True, preexec_fn=limit_memory, timeout=120)
    assert proc.returncode in (0, 2), (proc.returncode, proc.stderr)
    if proc.returncode == 2:
        assert len(proc.stderr.strip().splitlines()) == 1 and "--threads 64" in proc.stderr, \
            proc.stderr
        assert not os.path.exists(os.path.join(work, "o5"))  # nothing left behind

# CVT sizes: 10^8 cells (10^10 samples) and 10^9 samples are refused with the size they need.
cvt = ["--set", "space.samples=0", "--set", "space.cells=100000000"]
line = refused("illuminate", problem("arm-cvt.toml"), "--out", os.path.join(work, "o6"), *cvt,
               expect=["space.cells = 100000000", "GB", "lower space.samples or space.cells"])
line = refused("illuminate", problem("arm-cvt.toml"), "--out", os.path.join(work, "o7"),
               "--set", "space.samples=1000000000",
               expect=["1000000000 samples", "GB", "lower space.samples or space.cells"])
assert not os.path.exists(os.path.join(work, "o6")) and not os.path.exists(os.path.join(work, "o7"))

# A tournament of 10^9 draws per parent made the first batch endless (and deaf to SIGINT).
refused("illuminate", problem("arm.toml"), "--out", os.path.join(work, "o8"), "-n", 1000,
        "--set", "search.algorithm=objective", "--set", "search.tournament=1000000000",
        expect=["search.tournament", "at most the population size"])

# initial = 0 silently meant one batch.
refused("illuminate", problem("arm.toml"), "--out", os.path.join(work, "o9"), "-n", 1000,
        "--set", "search.initial=0", expect=["search.initial", "at least 1"])

# archive.h5 being a folder was found only after the whole search (--force).
out = os.path.join(work, "o10")
os.makedirs(os.path.join(out, "archive.h5"))
refused("illuminate", problem("arm.toml"), "--out", out, "--force", "-n", 10**9,
        expect=["archive.h5", "is a folder"], timeout=120)
# A read-only output folder (permissions do not bind root, so only checked for other users).
if os.geteuid() != 0:
    out = os.path.join(work, "o11")
    os.makedirs(out)
    os.chmod(out, 0o555)
    refused("illuminate", problem("arm.toml"), "--out", out, "-n", 10**9,
            expect=[out, "cannot write"], timeout=120)
else:
    print("running as root: the read-only folder case is not checkable here")

# SIGINT in the first instant of the run: once the process has loaded its problem (its plugin
# appears in /proc/PID/maps), while the CVT is still being built. Before, the handler came only
# with the search loop, and such a signal killed the run with nothing written. (The dynamic
# loader's start-up before main, ~0.1-0.3 s here, is outside any program's reach.)
rng = random.Random()
cache = os.path.join(work, "cache")
for attempt in range(4):
    out = os.path.join(work, f"early{attempt}")
    env = dict(os.environ, TESSERA_CACHE_DIR=os.path.join(cache, str(attempt)))  # a cold CVT build
    proc = subprocess.Popen([TESSERA, "illuminate", problem("arm-cvt.toml"), "--out", out,
                             "--set", "space.cells=4000", "--set", "space.samples=0", "-n", "20000",
                             "--quiet"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            env=env)
    deadline = time.time() + 60
    while time.time() < deadline and proc.poll() is None:
        try:
            with open(f"/proc/{proc.pid}/maps") as maps:
                if "tessera-plugin-arm" in maps.read():
                    break
        except OSError:
            pass
        time.sleep(0.001)
    time.sleep(rng.uniform(0.0, 0.05))
    proc.send_signal(signal.SIGINT)
    stdout, stderr = proc.communicate(timeout=300)
    assert proc.returncode in (0, 130), (proc.returncode, stderr)
    archive = os.path.join(out, "archive.h5")
    if proc.returncode == 130:
        assert os.path.exists(archive), stderr
        run("inspect", archive)
        run("resume", archive, "--quiet", env=env)
    assert not any(".tmp-" in n for n in os.listdir(out)), os.listdir(out)
    print("early SIGINT", attempt, "exit", proc.returncode)
print("all refused in one line; early SIGINT leaves a checkpoint")
