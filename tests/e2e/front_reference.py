# `tessera front` against a brute-force O(N^2) dominance check (from the definition: at least as
# good on every objective, strictly better on one; tests/reference/selection_reference.py) on
# archives read with h5py: two and three objectives, minimised and maximised, with constraints,
# and descriptors rounded to a coarse lattice in a second archive so that ties occur.
import csv
import io
import json
import os
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.join(os.environ["TESSERA_SOURCE_DIR"], "tests", "reference"))
import selection_reference as ref  # noqa: E402

from tessera_test_util import SOURCE, Checks, run_expecting as run  # noqa: E402

check = Checks()


def compare(path, objectives, within=()):
    a = ref.load_archive(path)
    args = ["front", path, "--format", "json"]
    for o in objectives:
        args += ["--objective", o]
    for name, lo, hi in within:
        args += ["--within", "%s=%r:%r" % (name, lo, hi)]
    doc = json.loads(run(*args).stdout)
    rows = np.flatnonzero(ref.constraint_mask(a, None, within))
    columns, maximize = [], []
    for o in objectives:
        name, goal = o.rsplit(":", 1)
        columns.append(a["fitness"][rows] if name == "fitness"
                       else a["descriptor"][rows, a["names"].index(name)])
        maximize.append(goal == "max")
    values = np.stack(columns, axis=1)
    expected = sorted(int(a["cell"][rows[i]]) for i in ref.non_dominated(values, maximize))
    got = [m["cell"] for m in doc["front"]]
    label = "%s %s %s" % (os.path.basename(path), objectives, within)
    check(sorted(got) == expected, "%s: front cells %s, brute force %s" %
          (label, sorted(got)[:12], expected[:12]))
    check(doc["candidates"] == len(rows), label + ": candidates")
    first = [m["objectives"][0] for m in doc["front"]]
    ordered = sorted(first, reverse=maximize[0])
    check(first == ordered, label + ": not sorted by the first objective, best first")
    check([m["rank"] for m in doc["front"]] == list(range(1, len(got) + 1)), label + ": ranks")
    return doc


with tempfile.TemporaryDirectory() as tmp:
    out = os.path.join(tmp, "grid")
    run("illuminate", os.path.join(SOURCE, "problems", "arm.toml"), "--out", out, "-q",
        "--set", "search.evaluations=6000", "--set", "search.batch=500")
    path = os.path.join(out, "archive.h5")
    cases = [
        (["fitness:max", "x:max"], ()),
        (["fitness:max", "x:min"], ()),
        (["x:max", "fitness:max"], ()),
        (["fitness:max", "y:min", "x:max"], ()),
        (["fitness:max", "x:max"], (("y", -0.2, 0.3),)),
        (["x:max", "y:max", "fitness:min"], (("x", 0.0, 1.0),)),
    ]
    for objectives, within in cases:
        compare(path, objectives, within)

    # Ties: the same archive with fitness rounded to whole units, and three rows of one grid
    # column made equal in (fitness, x) at the top of the front (their y kept, so every elite
    # still lies in its own cell); written with h5py.
    tied = os.path.join(tmp, "tied.h5")
    with h5py.File(path, "r") as src, h5py.File(tied, "w") as dst:
        for key, value in src.attrs.items():
            dst.attrs[key] = value
        src.copy(src["space"], dst, "space")
        src.copy(src["genome"], dst, "genome")
        src.copy(src["history"], dst, "history")
        src.copy(src["elites"], dst, "elites")
        d = src["elites/descriptor"][()].copy()
        f = np.round(src["elites/fitness"][()])
        lo, hi = src["space/lower"][()], src["space/upper"][()]
        res = src["space/resolution"][()]
        column = np.clip(np.floor((d[:, 0] - lo[0]) / (hi[0] - lo[0]) * res[0]), 0, res[0] - 1)
        # The rows of a grid column holding several elites get one x (the column's largest) and
        # one fitness above every other: equal points at the top of the front.
        counts = np.bincount(column.astype(np.int64))
        shared = np.flatnonzero(column == np.argmax(counts))
        check(len(shared) > 1, "tied archive: a grid column holds several elites")
        best = shared[np.argmax(d[shared, 0])]
        others = [i for i in shared if i != best][:2]
        f[best] = f.max() + 0.5
        d[others, 0] = d[best, 0]
        f[others] = f[best]
        dst["elites/descriptor"][...] = d
        dst["elites/fitness"][...] = f
    for objectives, within in cases:
        doc = compare(tied, objectives, within)
    doc = compare(tied, ["fitness:max", "x:max"])
    values = [tuple(m["objectives"]) for m in doc["front"]]
    check(len(values) > len(set(values)), "tied archive: expected duplicate points on the front")

    text = run("front", path, "--objective", "fitness:max", "--objective", "x:max").stdout
    rows = list(csv.DictReader(io.StringIO(run("front", path, "--objective", "fitness:max",
                                               "--objective", "x:max", "--format", "csv").stdout)))
    check(len(rows) == len(text.strip().splitlines()) - 1, "csv and text rows differ")
    check("objectives.fitness" in rows[0] and "objectives.x" in rows[0], "csv header: %r" % rows[0])

    for args, needle in [(["--objective", "fitness:max"], "two or more"),
                         (["--objective", "fitness:max", "--objective", "z:min"], "'z'"),
                         (["--objective", "fitness:max", "--objective", "x:up"], "x:up"),
                         (["--objective", "fitness:max", "--objective", "x:min", "--within",
                           "x=5:6"], "no elite satisfies")]:
        p = run("front", path, *args, expect=2)
        check(len(p.stderr.strip().splitlines()) == 1 and needle in p.stderr,
              "front %s: stderr %r" % (args, p.stderr))

check.finish("front")
