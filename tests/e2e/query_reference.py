# `tessera query` against an exhaustive numpy search and scipy.spatial.cKDTree (Debian
# python3-scipy) on the same scaled descriptors (archives read with h5py), with and without
# constraints, for a grid and a CVT archive of the arm problem; plus the refusals (exit 2, one
# line). References: tests/reference/selection_reference.py.
import csv
import io
import json
import os
import sys
import tempfile

import numpy as np
from scipy.spatial import cKDTree

sys.path.insert(0, os.path.join(os.environ["TESSERA_SOURCE_DIR"], "tests", "reference"))
import selection_reference as ref  # noqa: E402

from tessera_test_util import SOURCE, Checks, run_expecting as run  # noqa: E402

check = Checks()


def illuminate(tmp, run_file, name, *extra):
    out = os.path.join(tmp, name)
    run("illuminate", os.path.join(SOURCE, "problems", run_file), "--out", out, "-q",
        "--set", "search.evaluations=6000", "--set", "search.batch=500", *extra)
    return os.path.join(out, "archive.h5")


def compare(archive_path, a, targets_csv, targets, k, min_fitness=None, within=()):
    args = ["query", archive_path, "--targets", targets_csv, "--k", str(k), "--format", "json"]
    if min_fitness is not None:
        args += ["--min-fitness", repr(min_fitness)]
    for name, lo, hi in within:
        args += ["--within", "%s=%r:%r" % (name, lo, hi)]
    matches = json.loads(run(*args).stdout)["matches"]
    mask = ref.constraint_mask(a, min_fitness, within)
    rows = np.flatnonzero(mask)
    tree = cKDTree(ref.scaled(a, a["descriptor"][rows]))
    kk = min(k, len(rows))
    label = "%s k=%d min_fitness=%s within=%s" % (os.path.basename(os.path.dirname(archive_path)),
                                                 k, min_fitness, within)
    check(len(matches) == kk * len(targets), "%s: %d matches, expected %d" %
          (label, len(matches), kk * len(targets)))
    for t, target in enumerate(targets):
        got = matches[t * kk:(t + 1) * kk]
        brute_rows, brute_dist = ref.brute_force_nearest(a, mask, target, kk)
        kd_dist, kd_idx = tree.query(ref.scaled(a, target), k=kk)
        kd_rows = rows[np.atleast_1d(kd_idx)]
        kd_dist = np.atleast_1d(kd_dist)
        for r, m in enumerate(got):
            where = "%s target %s rank %d" % (label, target, r + 1)
            check(m["rank"] == r + 1, where + ": rank %r" % m["rank"])
            check(np.allclose(m["target"], target, rtol=0, atol=0), where + ": target echoed wrong")
            check(abs(m["distance"] - brute_dist[r]) <= 1e-12, where + ": distance %r vs brute %r" %
                  (m["distance"], brute_dist[r]))
            check(abs(m["distance"] - kd_dist[r]) <= 1e-9, where + ": distance %r vs cKDTree %r" %
                  (m["distance"], kd_dist[r]))
            # Same elite unless the reference distances tie (then either order is right).
            tied = (r > 0 and abs(brute_dist[r] - brute_dist[r - 1]) < 1e-12) or \
                   (r + 1 < kk and abs(brute_dist[r] - brute_dist[r + 1]) < 1e-12)
            if not tied:
                check(m["cell"] == int(a["cell"][brute_rows[r]]), where + ": cell %r vs brute %r" %
                      (m["cell"], a["cell"][brute_rows[r]]))
                check(m["cell"] == int(a["cell"][kd_rows[r]]), where + ": cell %r vs cKDTree %r" %
                      (m["cell"], a["cell"][kd_rows[r]]))
                e = brute_rows[r]
                check(m["fitness"] == a["fitness"][e], where + ": fitness")
                check(m["descriptor"] == list(a["descriptor"][e]), where + ": descriptor")
                check(m["genome"] == list(a["genome"][e]), where + ": genome")
            if min_fitness is not None:
                check(m["fitness"] >= min_fitness, where + ": violates --min-fitness")
            for name, lo, hi in within:
                v = m["descriptor"][a["names"].index(name)]
                check(lo <= v <= hi, where + ": violates --within")
    return matches


def one_line_error(args, needle):
    p = run(*args, expect=2)
    lines = p.stderr.strip().splitlines()
    check(len(lines) == 1 and lines[0].startswith("tessera: ") and needle in lines[0],
          "%s: expected one error line naming %r, got %r" % (args, needle, p.stderr))
    check(p.stdout == "", "%s: printed results despite the error" % (args,))


with tempfile.TemporaryDirectory() as tmp:
    archives = {
        "grid": illuminate(tmp, "arm.toml", "grid"),
        "cvt": illuminate(tmp, "arm-cvt.toml", "cvt", "--set", "space.cells=400",
                          "--set", "space.samples=20000"),
    }
    rng = np.random.default_rng(12345)
    for kind, path in archives.items():
        a = ref.load_archive(path)
        check(a["kind"] == kind, "%s archive has kind %r" % (kind, a["kind"]))
        check(len(a["fitness"]) > 100, "%s archive has only %d elites" % (kind, len(a["fitness"])))
        targets = [list(rng.uniform(a["lower"] - 0.1, a["upper"] + 0.1)) for _ in range(25)]
        targets.append(list(a["descriptor"][3]))  # exactly on an elite: distance 0
        targets_csv = os.path.join(tmp, kind + "-targets.csv")
        with open(targets_csv, "w") as f:
            f.write(",".join(a["names"]) + "\n")
            for t in targets:
                f.write(",".join(repr(float(v)) for v in t) + "\n")
        median = float(np.median(a["fitness"]))
        for k in (1, 4, 25):
            compare(path, a, targets_csv, targets, k)
            compare(path, a, targets_csv, targets, k, min_fitness=median)
            compare(path, a, targets_csv, targets, k, within=[("x", -0.2, 0.5)])
            compare(path, a, targets_csv, targets, k, min_fitness=median,
                    within=[("x", -0.2, 0.5), ("y", 0.0, 1.0)])
        # Few feasible elites: k larger than the candidates returns all of them.
        narrow = [("x", 0.3, 0.32), ("y", 0.3, 0.4)]
        if ref.constraint_mask(a, None, narrow).any():
            compare(path, a, targets_csv, targets, 50, within=narrow)

        # One --target, in all three formats, agrees with the JSON form.
        t = "%r,%r" % (targets[0][0], targets[0][1])
        as_json = json.loads(run("query", path, "--target=" + t, "--k", "3", "--format", "json").stdout)
        rows = list(csv.DictReader(io.StringIO(run("query", path, "--target=" + t, "--k", "3",
                                                   "--format", "csv").stdout)))
        check(len(rows) == 3, "csv: %d rows" % len(rows))
        for m, row in zip(as_json["matches"], rows):
            check(int(row["cell"]) == m["cell"] and float(row["distance"]) == m["distance"] and
                  float(row["descriptor.x"]) == m["descriptor"][0] and
                  float(row["genome.9"]) == m["genome"][9], "csv row differs from json: %r" % row)
        text = run("query", path, "--target=" + t, "--k", "3").stdout.splitlines()
        check(len(text) == 4 and text[0].split()[:4] == ["target", "rank", "cell", "distance"],
              "text output: %r" % text)

    # Refusals: exit 2, one line, nothing on stdout.
    grid = archives["grid"]
    one_line_error(["query", grid, "--target", "0.1,0.2,0.3"], "3 values")
    one_line_error(["query", grid, "--target", "0.1"], "1 values")
    one_line_error(["query", grid, "--target", "0.1,0.2", "--within", "z=0:1"], "'z'")
    one_line_error(["query", grid, "--target", "0.1,0.2", "--min-fitness", "1"],
                   "no elite satisfies")
    one_line_error(["query", grid, "--target", "0.1,0.2", "--within", "x=2:3"],
                   "no elite satisfies")
    one_line_error(["query", grid, "--targets", os.path.join(tmp, "missing.csv")], "missing.csv")
    bad = os.path.join(tmp, "bad.csv")
    with open(bad, "w") as f:
        f.write("0.1,0.2\n0.3,zero\n")
    one_line_error(["query", grid, "--targets", bad], "line 2")
    one_line_error(["query", os.path.join(tmp, "nothing.h5"), "--target", "0,0"], "nothing.h5")

check.finish("query")
