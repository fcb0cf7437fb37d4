#!/usr/bin/python3
"""Equal-budget comparison of emitters on the shipped run files: MAP-Elites with Gaussian
mutation, with Iso+LineDD, CMA-ME and CMA-MAE, on the linear-projection benchmarks (100
parameters, 100x100 grid) and the arm with 100 joints (100x100 grid), several seeds each.

Problems: sphere-proj and rastrigin-proj (genome box [-5.12, 5.12]: the box clips every
parameter where the projection's clip would, so the extreme descriptors come free),
sphere-proj-wide and rastrigin-proj-wide (the published setting: a wider box in which a
parameter past 5.12 folds back to 5.12 / x, published absolute steps), and arm.

The table gives, per problem and method, the median normalised QD-score (the QD-score with the
fitness mapped linearly onto [0, 100], divided by the number of cells, as the CMA-ME and CMA-MAE
papers report it), the median coverage, then two-sided Mann-Whitney U p-values (scipy) between
every pair of methods on the normalised QD-score, with the share of seed pairs in which the
first method scored higher.

usage: bench/cma_emitters.py [--tessera PATH] [--budget N] [--seeds K] [--jobs J]
                             [--problems sphere-proj,...] [--work DIR]
Runs are single-threaded, J at a time (default 2), under nice -n 10. Budget N evaluations per
run (default 60,000, some minutes on two busy cores); the published curves run to millions.
The README's table (section "The emitter benchmark and the published shape") came from
--budget 540000 on the two -wide problems and --budget 270000 on the other three, 5 seeds.
"""
import argparse
import concurrent.futures
import itertools
import math
import os
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np
from scipy.stats import mannwhitneyu

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), ".."))

# method -> (run file pattern, extra settings). The Gaussian runs use the Iso+LineDD run file
# with the operator switched, so both share batch, steps and budget.
METHODS = {
    "gaussian": ("{p}.toml", ["--set", "search.operator=gaussian"]),
    "iso-line-dd": ("{p}.toml", ["--set", "search.operator=iso-line-dd"]),
    "cma-me": ("{p}-cma-me.toml", []),
    "cma-mae": ("{p}-cma-mae.toml", []),
}
# problem -> (run file stem, extra settings, highest possible fitness). The lowest possible
# fitness is the archive's /history fitness_floor; together they map fitness onto [0, 100].
PROBLEMS = {
    "sphere-proj": ("sphere-proj", [], 100.0),
    "rastrigin-proj": ("rastrigin-proj", [], 100.0),
    "sphere-proj-wide": ("sphere-proj-wide", [], 100.0),
    "rastrigin-proj-wide": ("rastrigin-proj-wide", [], 100.0),
    "arm": ("arm", ["--set", "problem.options.joints=100"], 0.0),  # minus a variance: at most 0
}


def find_tessera():
    for candidate in ("build/src/tessera", "build/src/cli/tessera", "build/tessera"):
        path = os.path.join(ROOT, candidate)
        if os.path.exists(path):
            return path
    return "tessera"


def measure(path, fitness_top):
    """Normalised QD-score (fitness mapped onto [0, 100], sum over elites / cells), coverage."""
    with h5py.File(path, "r") as f:
        floor = float(f["history"].attrs["fitness_floor"])
        fitness = np.asarray(f["elites/fitness"][:], dtype=float)
        cells = int(np.prod(f["space/resolution"][:]))
    normalised = 100.0 * (fitness - floor) / (fitness_top - floor)
    return float(normalised.sum()) / cells, len(fitness) / cells


def run_one(args, problem, method, seed, work):
    stem, problem_extra, top = PROBLEMS[problem]
    pattern, extra = METHODS[method]
    runfile = os.path.join(ROOT, "problems", pattern.format(p=stem))
    out = os.path.join(work, f"{problem}-{method}-{seed}")
    cmd = ["nice", "-n", "10", args.tessera, "illuminate", runfile, "--out", out, "--force",
           "-n", str(args.budget), "--threads", "1", "--quiet", "--set", f"search.seed={seed}",
           *problem_extra, *extra]
    t0 = time.time()
    subprocess.run(cmd, check=True, capture_output=True)
    qd, cov = measure(os.path.join(out, "archive.h5"), top)
    return problem, method, seed, qd, cov, time.time() - t0


def load():
    with open("/proc/loadavg") as f:
        return " ".join(f.read().split()[:3])


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tessera", default=find_tessera())
    parser.add_argument("--budget", type=int, default=60000)
    parser.add_argument("--seeds", type=int, default=5)
    parser.add_argument("--jobs", type=int, default=2)
    parser.add_argument("--problems", default=",".join(PROBLEMS))
    parser.add_argument("--work", default=None)
    args = parser.parse_args()
    work = args.work or tempfile.mkdtemp(prefix="tessera-cma-bench-")
    problems = args.problems.split(",")
    for p in problems:
        if p not in PROBLEMS:
            sys.exit(f"cma_emitters.py: unknown problem '{p}' (choose {', '.join(PROBLEMS)})")
    results = {}
    started = time.time()
    load_start = load()
    jobs = [(p, m, s) for p in problems for m in METHODS for s in range(1, args.seeds + 1)]
    with concurrent.futures.ThreadPoolExecutor(max_workers=args.jobs) as pool:
        futures = [pool.submit(run_one, args, p, m, s, work) for p, m, s in jobs]
        for future in concurrent.futures.as_completed(futures):
            p, m, s, qd, cov, seconds = future.result()
            results.setdefault((p, m), []).append((qd, cov))
            print(f"{p:19s} {m:11s} seed {s}: QD/cells {qd:8.3f} coverage {cov:.4f}"
                  f" ({seconds:.0f} s)", file=sys.stderr, flush=True)
    print(f"Equal budget: {args.budget} evaluations per run, {args.seeds} seeds, {args.jobs} "
          f"single-threaded runs at a time; {time.time() - started:.0f} s in all; load average "
          f"{load_start} at the start, {load()} at the end.")
    print("Medians: normalised QD-score (fitness on [0, 100], QD-score / cells) and coverage.")
    print(f"{'problem':19s} " + " ".join(f"{m:>19s}" for m in METHODS))
    for p in problems:
        cells = []
        for m in METHODS:
            rows = np.array(results[(p, m)])
            cells.append(f"{np.median(rows[:, 0]):8.2f} / {100 * np.median(rows[:, 1]):5.1f}%")
        print(f"{p:19s} " + " ".join(f"{c:>19s}" for c in cells))
    print("\nMann-Whitney U, two-sided, on the normalised QD-score: p (share of seed pairs "
          "with A > B)")
    pairs = list(itertools.combinations(reversed(list(METHODS)), 2))
    print(f"{'problem':19s} " + " ".join(f"{a + ' v ' + b:>22s}" for a, b in pairs))
    for p in problems:
        cells = []
        for a, b in pairs:
            qa = [r[0] for r in results[(p, a)]]
            qb = [r[0] for r in results[(p, b)]]
            u = mannwhitneyu(qa, qb, alternative="two-sided")
            share = u.statistic / (len(qa) * len(qb))
            p_text = "nan" if math.isnan(u.pvalue) else f"{u.pvalue:.3f}"
            cells.append(f"{p_text} ({share:.2f})")
        print(f"{p:19s} " + " ".join(f"{c:>22s}" for c in cells))


if __name__ == "__main__":
    main()
