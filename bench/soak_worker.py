#!/usr/bin/python3
"""Process worker for bench/worker_soak.py: the planar arm (README.md, "Shipped problems"; pure
Python, no numpy, so that a restart is quick) with faults injected at set rates.

usage: soak_worker.py MODE RATES
  MODE   "faulty": misbehave as the fault says; "refuse": answer {"error": KIND} instead (a
         well-behaved worker that declines exactly the same genomes)
  RATES  kind=rate,... with kinds crash, hang, garbage, nan, wrong_id, error, wrong_digest

Whether a genome faults, and how, is decided by its digest (FNV-1a 64 of the genome as
little-endian doubles, docs/process-protocol.md) mapped to [0, 1): the same genomes fault in
both modes, whatever worker gets them and in whatever order. Every injected fault is written to
stderr (Tessera appends it to the run's workers.log) as "soak: KIND ID" before it happens.
"""
import json
import math
import os
import struct
import sys
import time

KINDS = ("crash", "hang", "garbage", "nan", "wrong_id", "error", "wrong_digest")


def digest_value(genome):
    h = 0xCBF29CE484222325
    for byte in struct.pack("<%dd" % len(genome), *genome):
        h = ((h ^ byte) * 0x100000001B3) & 0xFFFFFFFFFFFFFFFF
    return h


def fault_of(h, rates):
    """The fault kind of a genome with digest h, or None."""
    u = h / 2.0**64
    edge = 0.0
    for kind in KINDS:
        edge += rates.get(kind, 0.0)
        if u < edge:
            return kind
    return None


def evaluate(theta):
    """Arm with n = len(theta) links of length 1/n: (fitness, [x, y])."""
    n = len(theta)
    angle = x = y = 0.0
    for t in theta:
        angle += t
        x += math.cos(angle) / n
        y += math.sin(angle) / n
    mean = sum(theta) / n
    variance = sum((t - mean) ** 2 for t in theta) / n
    return -variance, [x, y]


def main():
    mode = sys.argv[1]
    rates = {k: float(v) for k, v in (item.split("=") for item in sys.argv[2].split(","))}
    out = sys.stdout
    for line in sys.stdin:
        if not line.strip():
            continue
        request = json.loads(line)
        ident, genome = request["id"], request.get("genome")
        if genome is None:  # scene / trace: not served
            out.write(json.dumps({"id": ident, "error": "not served"}) + "\n")
            out.flush()
            continue
        h = digest_value(genome)
        kind = fault_of(h, rates)
        digest = "%016x" % h
        if kind is not None:
            sys.stderr.write("soak: %s %d\n" % (kind, ident))
            sys.stderr.flush()
        if kind is not None and mode == "refuse":
            out.write(json.dumps({"id": ident, "error": kind}) + "\n")
        elif kind == "crash":
            os._exit(3)
        elif kind == "hang":
            time.sleep(3600)
        elif kind == "garbage":
            out.write("<<garbage %d>>\n" % ident)
        else:
            fitness, descriptor = evaluate(genome)
            answer = {"id": ident, "fitness": fitness, "descriptor": descriptor, "digest": digest}
            if kind == "nan":
                answer["fitness"] = float("nan")  # json writes NaN (not JSON; Tessera reads it)
            elif kind == "wrong_id":
                answer["id"] = ident + (1 << 40)
            elif kind == "error":
                answer = {"id": ident, "error": "injected"}
            elif kind == "wrong_digest":
                answer["digest"] = "%016x" % (h ^ 1)
            out.write(json.dumps(answer) + "\n")
        out.flush()


if __name__ == "__main__":
    main()
