#!/usr/bin/env python3
"""Example Tessera evaluator process: the planar arm problem, written in Python with numpy.

Tessera starts this script as a worker (see arm-process.toml beside it: [problem] kind =
"process") and talks to it over a line protocol on stdin and stdout. Any language works the
same way; this file is the template.

Protocol
--------
* Tessera writes one request per line on the worker's stdin, a JSON object:
      {"id": 17, "genome": [0.25, -1.5, ...]}
  The genome has as many numbers as the run file's genome_lower / genome_upper.
* The worker answers each request with exactly one line on stdout, either
      {"id": 17, "fitness": -0.42, "descriptor": [0.31, 0.77]}
  with as many descriptor numbers as descriptor_lower / descriptor_upper, or
      {"id": 17, "error": "why this genome could not be evaluated"}
  Flush stdout after every answer, or Tessera waits for a line that sits in your buffer.
* Answers may come in any order (match them by id); Tessera may send a few requests before
  it reads an answer.
* Optionally an answer carries "digest": the digest of the genome it was computed from
  (genome_digest below: FNV-1a 64 over the genome as little-endian doubles, 16 hex digits).
  Tessera checks it and refuses an answer whose genome is not the one sent under its id, so a
  worker that mixes up its requests cannot store wrong elites.
* Numbers: write doubles with full precision (Python's json does: repr() round-trips), so
  that results do not depend on printing. NaN or infinity make the evaluation fail.
* stdout carries answers only. Diagnostics go to stderr, which Tessera appends to a log file
  next to the archive.
* When Tessera is done it closes stdin: leave the loop and exit.

Faults are survivable but cost time: a worker that exits is restarted and its requests retried
once; one that answers nothing for `timeout` seconds is killed and restarted, and that
evaluation fails. A worker runs with the user's rights: Tessera does not sandbox it.

The arm (DESIGN.md, "Shipped problems"): n joints with angles theta_i in [-pi, pi], every link
1/n long, base at the origin. End effector p = sum_i (1/n)(cos a_i, sin a_i) with
a_i = theta_1 + ... + theta_i; descriptor = p in [-1, 1]^2; fitness = -(population variance of
the n angles), between -pi^2 and 0. n is the length of the genome.
"""

import json
import struct
import sys

import numpy as np


def evaluate(genome):
    """Returns (fitness, descriptor) of one posture."""
    theta = np.asarray(genome, dtype=np.float64)
    if theta.ndim != 1 or theta.size == 0:
        raise ValueError("the genome must be a non-empty list of angles")
    absolute = np.cumsum(theta)  # a_i: angle of link i against the x axis
    link = 1.0 / theta.size
    x = float(np.sum(link * np.cos(absolute)))
    y = float(np.sum(link * np.sin(absolute)))
    fitness = -float(np.var(theta))  # population variance (ddof = 0)
    return fitness, [x, y]


def genome_digest(genome):
    """FNV-1a 64 over the genome as little-endian IEEE doubles, as 16 lowercase hex digits."""
    h = 0xCBF29CE484222325
    for byte in struct.pack("<%dd" % len(genome), *genome):
        h = ((h ^ byte) * 0x100000001B3) & 0xFFFFFFFFFFFFFFFF
    return "%016x" % h


def answer(line):
    """The answer line (without newline) to one request line."""
    request = json.loads(line)
    ident = request["id"]
    try:
        fitness, descriptor = evaluate(request["genome"])
        reply = {"id": ident, "fitness": fitness, "descriptor": descriptor,
                 "digest": genome_digest(request["genome"])}
    except (ValueError, TypeError, KeyError, struct.error) as error:
        reply = {"id": ident, "error": str(error)}
    return json.dumps(reply)


def main():
    for line in sys.stdin:  # ends when Tessera closes stdin
        if line.strip():
            sys.stdout.write(answer(line) + "\n")
            sys.stdout.flush()


if __name__ == "__main__":
    main()
