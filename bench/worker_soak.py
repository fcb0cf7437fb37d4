#!/usr/bin/python3
"""Soak of a misbehaving process worker (bench-style, not part of the test suite).

`tessera illuminate` runs the arm (10 joints, 100x100 grid) with bench/soak_worker.py workers
that crash, hang past the timeout, answer garbage, NaN, unknown ids, errors and wrong genome
digests at set rates, for --minutes, and is then stopped with SIGINT (it finishes the batch in
flight and checkpoints). Meanwhile tessera's resident size is read from /proc every second.
Alongside, the same run is made with workers that answer {"error": KIND} for exactly the
genomes that fault (faults are decided by the genome's digest): it follows the faulty run's
checkpoints (`tessera resume --evaluations` up to each checkpoint's count, then up to the
faulty run's final count), so that the soak ends minutes, not half an hour, after --minutes.
A run stopped and resumed equals the same run in one go (README, "Resuming"), so the chain of
resumes stands for one well-behaved run over the same evaluations. The script checks:
  1. the elites (cells, genomes, births, fitness, descriptors) and the history are bit-identical
     between the two runs: the faults cost nothing but the evaluations that failed;
  2. the failures counted by kind in the faulty run (tessera inspect) equal the faults the
     well-behaved run declined, by kind (its workers log each one);
  3. memory stays flat: the peak resident size (VmHWM) at the end is within 10 % (and 16 MiB)
     of the peak at --early-minutes.
Prints the peak resident size at --early-minutes and at the end, evaluations, durations and the
failure counts.

usage: bench/worker_soak.py [--tessera PATH] [--minutes M] [--early-minutes E] [--workers W]
                            [--rates kind=rate,...] [--timeout S] [--work DIR]
"""
import argparse
import collections
import json
import os
import signal
import subprocess
import sys
import tempfile
import threading
import time

import h5py
import numpy as np

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), ".."))
WORKER = os.path.join(ROOT, "bench", "soak_worker.py")
# Tessera's failure reason for each injected kind (docs/process-protocol.md).
REASON = {"crash": "crash", "hang": "timeout", "garbage": "malformed answer", "nan": "not finite",
          "wrong_id": "unknown id", "error": "worker error",
          "wrong_digest": "wrong genome digest"}
DEFAULT_RATES = ("crash=0.0002,hang=0.000005,garbage=0.0002,nan=0.0002,wrong_id=0.0002,"
                 "error=0.0002,wrong_digest=0.0002")


def run_file(path, mode, rates, workers, timeout, evaluations):
    bounds = ", ".join(["3.141592653589793"] * 10)
    with open(path, "w") as f:
        f.write(f"""[problem]
kind = "process"
name = "soak-arm"
command = ["/usr/bin/python3", "{WORKER}", "{mode}", "{rates}"]
workers = {workers}
timeout = {timeout}
genome_lower = [{", ".join(["-3.141592653589793"] * 10)}]
genome_upper = [{bounds}]
descriptor_lower = [-1.0, -1.0]
descriptor_upper = [1.0, 1.0]
descriptor_names = ["x", "y"]
fitness_lower = -9.869604401089358
fitness_upper = 0.0

[space]
kind = "grid"
resolution = [100, 100]

[search]
evaluations = {evaluations}
batch = 256
seed = 7
operator = "iso-line-dd"

[checkpoint]
every_seconds = 60
""")


def status_kib(pid, field):
    try:
        with open(f"/proc/{pid}/status") as f:
            for line in f:
                if line.startswith(field + ":"):
                    return int(line.split()[1])
    except OSError:
        return None
    return None


def elites_and_history(path):
    out = {}
    with h5py.File(path, "r") as f:
        for group in ("elites", "history"):
            for name, dataset in f[group].items():
                out[f"{group}/{name}"] = dataset[()]
        evaluations = int(f.attrs["evaluations"])
    return out, evaluations


def checkpoint_evaluations(path):
    """Evaluations in the archive at `path` (a checkpoint replaced by rename), None if none yet."""
    try:
        with h5py.File(path, "r") as f:
            return int(f.attrs["evaluations"])
    except (OSError, KeyError):
        return None


class Follower:
    """The well-behaved run, resumed up to the faulty run's latest checkpoint whenever idle."""

    def __init__(self, tessera, toml, out):
        self.tessera, self.toml, self.out = tessera, toml, out
        self.archive = os.path.join(out, "archive.h5")
        self.proc, self.budget, self.steps = None, 0, 0
        self.seconds = 0.0

    def busy(self):
        if self.proc is None:
            return False
        if self.proc.poll() is None:
            return True
        _, err = self.proc.communicate()
        self.seconds += time.time() - self.started
        if self.proc.returncode != 0:
            sys.exit(f"reference run to {self.budget} evaluations exited "
                     f"{self.proc.returncode}: {err}")
        self.proc = None
        return False

    def follow(self, target):
        """Starts the next leg up to `target` evaluations if idle and behind; True if started."""
        if target is None or target <= self.budget or self.busy():
            return False
        if self.budget == 0:
            argv = [self.tessera, "illuminate", self.toml, "--out", self.out, "--quiet",
                    "--force", "--evaluations", str(target)]
        else:
            argv = [self.tessera, "resume", self.archive, "--quiet", "--evaluations",
                    str(target)]
        self.budget, self.steps, self.started = target, self.steps + 1, time.time()
        self.proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                                     text=True)
        return True


def failures(tessera, archive):
    text = subprocess.run([tessera, "inspect", archive, "--format", "json"], check=True,
                          capture_output=True, text=True).stdout
    return json.loads(text)["counts"]["failures"]


def logged_faults(log, distinct):
    """Faults the workers logged, by kind (distinct request ids when a retry repeats one)."""
    seen = collections.defaultdict(set) if distinct else collections.Counter()
    with open(log) as f:
        for line in f:
            if line.startswith("soak: "):
                _, kind, ident = line.split()
                if distinct:
                    seen[kind].add(ident)
                else:
                    seen[kind] += 1
    return {k: (len(v) if distinct else v) for k, v in seen.items()}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tessera", default=os.path.join(ROOT, "build", "tessera"))
    parser.add_argument("--minutes", type=float, default=60.0)
    parser.add_argument("--early-minutes", type=float, default=10.0)
    parser.add_argument("--workers", type=int, default=4)
    parser.add_argument("--rates", default=DEFAULT_RATES)
    parser.add_argument("--timeout", type=float, default=5.0)
    parser.add_argument("--work", default=None)
    args = parser.parse_args()
    work = args.work or tempfile.mkdtemp(prefix="tessera-soak-")
    os.makedirs(work, exist_ok=True)
    print(f"work folder: {work}; load: {os.getloadavg()}", flush=True)

    # 1. the faulty run, stopped after --minutes
    faulty_toml = os.path.join(work, "faulty.toml")
    run_file(faulty_toml, "faulty", args.rates, args.workers, args.timeout, 10**12)
    faulty_out = os.path.join(work, "faulty")
    start = time.time()
    proc = subprocess.Popen([args.tessera, "illuminate", faulty_toml, "--out", faulty_out,
                             "--quiet", "--force"], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    samples = []  # (seconds, VmRSS KiB, VmHWM KiB)
    stop_at = start + args.minutes * 60

    def sample():
        while proc.poll() is None:
            rss, hwm = status_kib(proc.pid, "VmRSS"), status_kib(proc.pid, "VmHWM")
            if rss is not None:
                samples.append((time.time() - start, rss, hwm))
            time.sleep(1.0)

    sampler = threading.Thread(target=sample, daemon=True)
    sampler.start()
    faulty_archive = os.path.join(faulty_out, "archive.h5")
    reference_toml = os.path.join(work, "reference.toml")
    run_file(reference_toml, "refuse", args.rates, args.workers, args.timeout, 10**12)
    reference_out = os.path.join(work, "reference")
    follower = Follower(args.tessera, reference_toml, reference_out)
    while proc.poll() is None and time.time() < stop_at:
        follower.follow(checkpoint_evaluations(faulty_archive))
        time.sleep(0.5)
    if proc.poll() is None:
        proc.send_signal(signal.SIGINT)
    _, err = proc.communicate()
    sampler.join()
    faulty_seconds = time.time() - start
    if proc.returncode not in (0, 130):
        sys.exit(f"faulty run exited {proc.returncode}: {err}")
    faulty, evaluations = elites_and_history(os.path.join(faulty_out, "archive.h5"))
    counted = failures(args.tessera, os.path.join(faulty_out, "archive.h5"))
    injected = logged_faults(os.path.join(faulty_out, "workers.log"), distinct=True)
    early = [s for s in samples if s[0] <= args.early_minutes * 60]
    early_hwm = early[-1][2] if early else None
    end_hwm = samples[-1][2] if samples else None
    print(f"faulty run: {faulty_seconds / 60:.1f} min, {evaluations} evaluations, "
          f"exit {proc.returncode}", flush=True)
    print(f"peak RSS (VmHWM) at {early[-1][0] / 60 if early else 0:.1f} min: "
          f"{early_hwm} KiB; at the end ({samples[-1][0] / 60:.1f} min): {end_hwm} KiB; "
          f"RSS at the end: {samples[-1][1]} KiB", flush=True)
    print(f"failures counted by tessera: {counted}", flush=True)
    print(f"faults the faulty workers logged (distinct ids): {injected}", flush=True)

    # 2. the well-behaved run, finished up to the same number of evaluations
    start = time.time()
    while follower.busy():
        time.sleep(0.5)
    follower.follow(evaluations)
    while follower.busy():
        time.sleep(0.5)
    print(f"reference run: {follower.seconds / 60:.1f} min running in {follower.steps} legs, "
          f"{(time.time() - start) / 60:.1f} min after the faulty run ended", flush=True)
    reference, reference_evaluations = elites_and_history(
        os.path.join(reference_out, "archive.h5"))
    declined = logged_faults(os.path.join(reference_out, "workers.log"), distinct=False)
    print(f"faults the well-behaved workers declined: {declined}", flush=True)

    problems = []
    if reference_evaluations != evaluations:
        problems.append(f"evaluations {reference_evaluations} != {evaluations}")
    for key in sorted(set(faulty) | set(reference)):
        a, b = faulty.get(key), reference.get(key)
        if a is None or b is None or a.dtype != b.dtype or a.shape != b.shape or \
                np.ascontiguousarray(a).tobytes() != np.ascontiguousarray(b).tobytes():
            problems.append(f"{key} differs")
    expected = {REASON[k]: n for k, n in declined.items()}
    if counted != expected:
        problems.append(f"failures counted {counted} != declined by kind {expected}")
    if early_hwm is None or end_hwm > max(early_hwm * 1.10, early_hwm + 16 * 1024):
        problems.append(f"memory grew: peak {early_hwm} KiB early, {end_hwm} KiB at the end")
    print(f"elites: {len(faulty['elites/cell'])}, identical: "
          f"{not any('differs' in p for p in problems)}", flush=True)
    with open(os.path.join(work, "rss.csv"), "w") as f:
        f.write("seconds,rss_kib,hwm_kib\n")
        for s in samples:
            f.write("%.1f,%d,%d\n" % s)
    if problems:
        sys.exit("FAILED: " + "; ".join(problems))
    print("ok: elites and history bit-identical, failures counted by kind as injected, "
          "memory flat")


if __name__ == "__main__":
    main()
