# ctest-labels: plugins;workers
"""The optional genome digest of the process protocol: the shipped example worker echoes it and
every answer is accepted (so Python's digest equals tessera's); a worker that answers requests
under each other's id is caught by it, and no elite of the archive comes from a swapped answer:
each stored (fitness, descriptor) equals the example worker's own evaluation of the stored
genome (the same numpy code, so bit for bit)."""
import os
import re
import sys
import h5py
import numpy as np
from tessera_test_util import run, problem, tempdir, SOURCE

sys.path.insert(0, os.path.join(SOURCE, "problems", "examples"))
import arm_worker  # noqa: E402

# FNV-1a 64 test vectors (from memory of the FNV reference page: "" and "a").
def fnv(data):
    h = 0xCBF29CE484222325
    for b in data:
        h = ((h ^ b) * 0x100000001B3) & 0xFFFFFFFFFFFFFFFF
    return h
assert fnv(b"") == 0xCBF29CE484222325 and fnv(b"a") == 0xAF63DC4C8601EC8C

work = tempdir()
shipped = problem(os.path.join("examples", "arm-process.toml"))
text = open(shipped).read()
settings = ["-n", "1500", "--set", "search.batch=100", "--seed", "3", "--quiet"]

good = os.path.join(work, "good")
proc = run("illuminate", shipped, "--out", good, *settings)
with h5py.File(os.path.join(good, "archive.h5"), "r") as f:
    names = [k for k in f["resume/counters"].attrs.keys()]
assert not any("digest" in n for n in names), names
print("shipped worker: every digest accepted")

swap_file = os.path.join(work, "swap.toml")
worker = os.path.join(SOURCE, "tests", "fixtures", "workers", "swap_worker.py")
with open(swap_file, "w") as f:
    f.write(re.sub(r'command = \[[^\]]*\]', f'command = ["/usr/bin/python3", "{worker}"]', text))
swapped = os.path.join(work, "swapped")
proc = run("illuminate", swap_file, "--out", swapped, *settings)
with h5py.File(os.path.join(swapped, "archive.h5"), "r") as f:
    refused = int(f["resume/counters"].attrs.get("failed:wrong genome digest", 0))
    genome = f["elites/genome"][...]
    fitness = f["elites/fitness"][...]
    descriptor = f["elites/descriptor"][...]
print("swapped answers refused:", refused, "elites:", len(fitness))
assert refused > 0, "the swapping worker held no two requests at once"
assert len(fitness) > 0
for g, fit, d in zip(genome, fitness, descriptor):
    want_fit, want_d = arm_worker.evaluate(list(g))
    assert fit == want_fit and list(d) == want_d, (fit, want_fit, list(d), want_d)
print("no elite comes from a swapped answer")
