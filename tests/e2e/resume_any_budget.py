# ctest-labels: archive;engine
"""Stop-and-resume equals one run for any stop budget, not only multiples of the batch: the batch
cut by the budget is stored and completed on resume. Checked against the uninterrupted run bit for
bit (elites, history, resume state), for stops inside the first (random) batch, inside a later
batch, and twice inside the same batch."""
import os
import random
from tessera_test_util import run, problem, tempdir, read_archive, assert_same_run

work = tempdir()
rng = random.Random()
seed = rng.randrange(1 << 30)
print("random seed of this test:", seed)
rng.seed(seed)

batch, budget = 100, 2000
extra = ["--set", f"search.batch={batch}", "--seed", "5", "--threads", "2", "--quiet"]
whole = os.path.join(work, "whole")
run("illuminate", problem("arm.toml"), "--out", whole, "-n", budget, *extra)
expected = read_archive(os.path.join(whole, "archive.h5"))
assert len(expected["history/evaluations"]) == budget // batch

cut = lambda: rng.randrange(1, batch)  # an offset strictly inside a batch
plans = [
    [cut()],                                   # inside the initial random batch
    [rng.randrange(2, 19) * batch + cut()],    # inside a later batch
]
later = rng.randrange(2, 18) * batch
first = rng.randrange(1, batch - 1)
plans.append([later + first, later + rng.randrange(first + 1, batch)])  # twice in one batch
for n, stops in enumerate(plans):
    out = os.path.join(work, f"part{n}")
    run("illuminate", problem("arm.toml"), "--out", out, "-n", stops[0], *extra)
    archive = os.path.join(out, "archive.h5")
    for stop in stops[1:] + [budget]:
        run("resume", archive, "--evaluations", stop, "--threads", 1, "--quiet")
    assert_same_run(expected, read_archive(archive))
    print("stops at", stops, "then", budget, ": identical to one run")
