#!/usr/bin/python3
"""Equal-budget comparison of emitters on the shipped run files: MAP-Elites with Gaussian
mutation, with Iso+LineDD, CMA-ME and CMA-MAE, on sphere-proj and rastrigin-proj (100
parameters, 100x100 grid) and the arm with 100 joints (100x100 grid). Each method runs with
several seeds; the table gives the median QD-score divided by the number of cells (as the CMA-ME
and CMA-MAE papers report it), the median coverage, and two-sided Mann-Whitney U p-values
(scipy) between method pairs.

usage: bench/cma_emitters.py [--tessera PATH] [--budget N] [--seeds K] [--threads T]
                             [--problems sphere-proj,rastrigin-proj,arm] [--work DIR]
The default budget (60,000 evaluations, 5 seeds) finishes in about 15 minutes on two busy cores;
the published curves run to millions of evaluations, so larger budgets show the shape better.
"""
import argparse
import os
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np
from scipy.stats import mannwhitneyu

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), ".."))

# method -> (run file pattern, extra settings)
METHODS = {
    "gaussian": ("{p}.toml", ["--set", "search.operator=gaussian"]),
    "iso-line-dd": ("{p}.toml", ["--set", "search.operator=iso-line-dd"]),
    "cma-me": ("{p}-cma-me.toml", []),
    "cma-mae": ("{p}-cma-mae.toml", []),
}
PROBLEM_SETTINGS = {
    "sphere-proj": [],
    "rastrigin-proj": [],
    "arm": ["--set", "problem.options.joints=100"],
}
PAIRS = [("cma-mae", "cma-me"), ("cma-me", "iso-line-dd"), ("cma-me", "gaussian"),
         ("cma-mae", "iso-line-dd"), ("iso-line-dd", "gaussian")]


def find_tessera():
    for candidate in ("build/src/cli/tessera", "build/tessera", "build/src/tessera"):
        path = os.path.join(ROOT, candidate)
        if os.path.exists(path):
            return path
    return "tessera"


def measure(path):
    with h5py.File(path, "r") as f:
        qd = float(f["history/qd_score"][-1])
        coverage = float(f["history/coverage"][-1])
        elites = len(f["elites/fitness"])
    cells = elites / coverage if coverage > 0 else float("nan")
    return qd / cells, coverage


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tessera", default=find_tessera())
    parser.add_argument("--budget", type=int, default=60000)
    parser.add_argument("--seeds", type=int, default=5)
    parser.add_argument("--threads", type=int, default=2)
    parser.add_argument("--problems", default="sphere-proj,rastrigin-proj,arm")
    parser.add_argument("--work", default=None)
    args = parser.parse_args()
    work = args.work or tempfile.mkdtemp(prefix="tessera-cma-bench-")
    problems = args.problems.split(",")
    results = {}
    started = time.time()
    for p in problems:
        for method, (pattern, extra) in METHODS.items():
            runfile = os.path.join(ROOT, "problems", pattern.format(p=p))
            for seed in range(1, args.seeds + 1):
                out = os.path.join(work, f"{p}-{method}-{seed}")
                cmd = [args.tessera, "illuminate", runfile, "--out", out, "-n", str(args.budget),
                       "--threads", str(args.threads), "--quiet", "--set", f"search.seed={seed}",
                       *PROBLEM_SETTINGS[p], *extra]
                t0 = time.time()
                subprocess.run(cmd, check=True, capture_output=True)
                qd, cov = measure(os.path.join(out, "archive.h5"))
                results.setdefault((p, method), []).append((qd, cov))
                print(f"{p:15s} {method:12s} seed {seed}: qd/cell {qd:9.4f} coverage {cov:.4f}"
                      f" ({time.time() - t0:.1f} s)", file=sys.stderr, flush=True)
    print(f"\nEqual budget {args.budget} evaluations, {args.seeds} seeds, "
          f"{time.time() - started:.0f} s in all. Medians:")
    print(f"{'problem':15s} {'method':12s} {'QD/cells':>10s} {'coverage':>9s}")
    for p in problems:
        for method in METHODS:
            rows = np.array(results[(p, method)])
            print(f"{p:15s} {method:12s} {np.median(rows[:, 0]):10.4f} {np.median(rows[:, 1]):9.4f}")
    print("\nMann-Whitney U, two-sided, on QD/cells (p; A > B in how many of the seed pairs):")
    for p in problems:
        for a, b in PAIRS:
            qa = [r[0] for r in results[(p, a)]]
            qb = [r[0] for r in results[(p, b)]]
            u = mannwhitneyu(qa, qb, alternative="two-sided")
            share = u.statistic / (len(qa) * len(qb))
            print(f"{p:15s} {a:>12s} vs {b:12s} p = {u.pvalue:.4f}  A>B share {share:.2f}")


if __name__ == "__main__":
    main()
