#!/usr/bin/python3
"""The engine against a vectorised numpy MAP-Elites on the same problem, measured in one run.

Runs `tessera illuminate problems/arm.toml --evaluations N --threads 2` (10-joint arm, 100x100
grid, batch 1024, Iso+LineDD with its defaults) as a whole process, wall time, and
bench/arm_numpy_baseline.py on the same budget, alternating, REPEATS times each (seed r + 1 for
repeat r, in both). Prints the medians of the evaluation rates and QD-scores, the ratios with
their targets (>= 4x the numpy loop at an equal or better QD-score, judged by a Mann-Whitney U
test over the seeds) and the load before and after.

Usage: arm_vs_numpy.py [BUILD_DIR] [REPEATS] [EVALUATIONS]
       (defaults: <source>/build, 5, 2,000,000)
"""
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

from scipy.stats import mannwhitneyu

SOURCE = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def tessera_run(tessera, evaluations, seed, out):
    start = time.perf_counter()
    subprocess.run([tessera, "illuminate", os.path.join(SOURCE, "problems", "arm.toml"),
                    "--evaluations", str(evaluations), "--threads", "2", "--quiet",
                    "--set", f"search.seed={seed}", "--out", out], check=True,
                   stdout=subprocess.DEVNULL)
    seconds = time.perf_counter() - start
    info = json.loads(subprocess.run([tessera, "inspect", os.path.join(out, "archive.h5"),
                                      "--format", "json"], check=True, capture_output=True,
                                     text=True).stdout)
    return evaluations / seconds, float(info["qd_score"])


def numpy_run(evaluations, seed):
    start = time.perf_counter()
    text = subprocess.run([sys.executable, os.path.join(SOURCE, "bench", "arm_numpy_baseline.py"),
                           str(evaluations), str(seed)], check=True, capture_output=True,
                          text=True).stdout.split()
    seconds = time.perf_counter() - start
    fields = dict(zip(text[0::2], text[1::2]))
    return evaluations / seconds, float(fields["rate"]), float(fields["qd_score"])


def main():
    build = sys.argv[1] if len(sys.argv) > 1 else os.path.join(SOURCE, "build")
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    evaluations = int(sys.argv[3]) if len(sys.argv) > 3 else 2_000_000
    tessera = os.path.join(build, "tessera")
    uptime_before = subprocess.run(["uptime"], capture_output=True, text=True).stdout.strip()
    t_rate, t_qd, n_process, n_loop, n_qd = [], [], [], [], []
    with tempfile.TemporaryDirectory() as work:
        for r in range(repeats):
            rate, qd = tessera_run(tessera, evaluations, r + 1, os.path.join(work, f"run{r}"))
            t_rate.append(rate)
            t_qd.append(qd)
            process, loop, qd = numpy_run(evaluations, r + 1)
            n_process.append(process)
            n_loop.append(loop)
            n_qd.append(qd)
    uptime_after = subprocess.run(["uptime"], capture_output=True, text=True).stdout.strip()
    med = statistics.median
    print(f"arm, 10 joints, 100x100 grid, batch 1024, {evaluations} evaluations, "
          f"medians of {repeats} alternating runs")
    print(f"  tessera illuminate --threads 2 (whole process)  {med(t_rate):12.0f} /s   "
          f"QD-score {med(t_qd):.1f}")
    print(f"  numpy MAP-Elites (whole process)                {med(n_process):12.0f} /s   "
          f"QD-score {med(n_qd):.1f}")
    print(f"  numpy MAP-Elites (its loop only)                {med(n_loop):12.0f} /s")
    print(f"  tessera / numpy loop      {med(t_rate) / med(n_loop):6.2f}x  (target >= 4x)")
    print(f"  tessera / numpy process   {med(t_rate) / med(n_process):6.2f}x")
    print(f"  QD-score tessera / numpy  {med(t_qd) / med(n_qd):6.3f}   (target >= 1; range over seeds: "
          f"tessera {min(t_qd):.1f}..{max(t_qd):.1f}, numpy {min(n_qd):.1f}..{max(n_qd):.1f})")
    # Equal or better QD-score, judged over the seeds: Mann-Whitney U (scipy), one-sided for
    # "tessera lower" and two-sided.
    lower = mannwhitneyu(t_qd, n_qd, alternative="less").pvalue
    either = mannwhitneyu(t_qd, n_qd, alternative="two-sided").pvalue
    verdict = "lower" if lower < 0.05 else "not lower"
    print(f"  QD-score, Mann-Whitney U over the seeds: p(tessera lower) = {lower:.3f}, "
          f"two-sided p = {either:.3f}: {verdict} at the 0.05 level")
    print(f"  load before: {uptime_before}")
    print(f"  load after:  {uptime_after}")


if __name__ == "__main__":
    main()
