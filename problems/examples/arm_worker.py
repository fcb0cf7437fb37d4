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
* Numbers: write doubles with full precision (Python's json does: repr() round-trips), so
  that results do not depend on printing. NaN or infinity make the evaluation fail.
* stdout carries answers only. Diagnostics go to stderr, which Tessera appends to a log file
  next to the archive.
* When Tessera is done it closes stdin: leave the loop and exit.
* Optional: `tessera report` and `tessera trace` may ask for the problem's scene and for the
  trace of one genome:
      {"id": 18, "scene": true}            ->  {"id": 18, "scene": {"items": [...]}}
      {"id": 19, "trace": [0.25, ...]}     ->  {"id": 19, "trace": {"items": [...]}}
  Each item is {"kind", "name", "style", "closed", "columns", "rows"} or a note {"kind":
  "note", "name", "text"} (docs/process-protocol.md). A worker that does not serve them may
  answer anything else or nothing: Tessera then draws and traces nothing for the problem.

Faults are survivable but cost time: a worker that exits is restarted and its requests retried
once; one that answers nothing for `timeout` seconds is killed and restarted, and that
evaluation fails. A worker runs with the user's rights: Tessera does not sandbox it.

The arm (DESIGN.md, "Shipped problems"): n joints with angles theta_i in [-pi, pi], every link
1/n long, base at the origin. End effector p = sum_i (1/n)(cos a_i, sin a_i) with
a_i = theta_1 + ... + theta_i; descriptor = p in [-1, 1]^2; fitness = -(population variance of
the n angles), between -pi^2 and 0. n is the length of the genome.
"""

import json
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


def scene():
    """The arm's static geometry: its base, its reach, and where descriptors sit (x, y)."""
    return {"items": [
        {"kind": "note", "name": "units", "text": "arm lengths (total length 1)"},
        {"kind": "circles", "name": "reach", "style": "guide", "columns": ["x", "y", "r"],
         "rows": [[0.0, 0.0, 1.0]]},
        {"kind": "points", "name": "base", "style": "anchor", "columns": ["x", "y"],
         "rows": [[0.0, 0.0]]},
        {"kind": "descriptor_map", "name": "end effector",
         "columns": ["ix", "sx", "ox", "iy", "sy", "oy"], "rows": [[0, 1, 0, 1, 1, 0]]}]}


def trace(genome):
    """The posture: every joint's position, the base first and the end effector last."""
    theta = np.asarray(genome, dtype=np.float64)
    absolute = np.cumsum(theta)
    link = 1.0 / theta.size
    x = np.concatenate([[0.0], np.cumsum(link * np.cos(absolute))])
    y = np.concatenate([[0.0], np.cumsum(link * np.sin(absolute))])
    rows = [[float(i), float(x[i]), float(y[i])] for i in range(theta.size + 1)]
    return {"items": [{"kind": "polyline", "name": "joints", "style": "body",
                       "columns": ["joint", "x", "y"], "rows": rows}]}


def answer(line):
    """The answer line (without newline) to one request line."""
    request = json.loads(line)
    ident = request["id"]
    try:
        if "scene" in request:
            reply = {"id": ident, "scene": scene()}
        elif "trace" in request:
            reply = {"id": ident, "trace": trace(request["trace"])}
        else:
            fitness, descriptor = evaluate(request["genome"])
            reply = {"id": ident, "fitness": fitness, "descriptor": descriptor}
    except (ValueError, TypeError, KeyError) as error:
        reply = {"id": ident, "error": str(error)}
    return json.dumps(reply)


def main():
    for line in sys.stdin:  # ends when Tessera closes stdin
        if line.strip():
            sys.stdout.write(answer(line) + "\n")
            sys.stdout.flush()


if __name__ == "__main__":
    main()
