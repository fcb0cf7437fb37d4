# ctest-labels: archive
# ctest-timeout: 600
"""Format 1 archives (tests/fixtures/archives, written by the format 1 writer) are still read by
every command: inspect (which names the version), query, front, report, transfer and resume.
What the commands print is checked against the raw datasets read with h5py (Debian
python3-h5py); a resumed format 1 run continues from the stored state and is written as format 2
(docs/archive-format.md, "What format 1 differed in")."""
import json
import os
import shutil

import h5py
import numpy as np
from tessera_test_util import SOURCE, point_arena_layout_at_shipped, problem, run, tempdir

work = tempdir()
fixtures = os.path.join(SOURCE, "tests", "fixtures", "archives")
failures = []


def check(condition, what):
    if not condition:
        failures.append(what)
        print("FAIL:", what)


def raw(path):
    with h5py.File(path, "r") as f:
        return dict(version=int(f.attrs["format_version"]), kind=f["space"].attrs["kind"],
                    cell=f["elites/cell"][...], fitness=f["elites/fitness"][...],
                    descriptor=f["elites/descriptor"][...], genome=f["elites/genome"][...],
                    offset=float(f["history"].attrs["qd_offset"]),
                    evaluations=int(f.attrs["evaluations"]),
                    resume={k: v[...] for k, v in f["resume/arrays"].items()})


cases = {
    "format1-arm-grid.h5": dict(target="0.2,0.3", transfer=[problem("arm.toml"), "--set",
                                                             "problem.options.joints=4"]),
    "format1-arm-cvt.h5": dict(target="0.2,0.3", transfer=[problem("arm.toml"), "--set",
                                                            "problem.options.joints=3"]),
    "format1-arena-novelty.h5": dict(target="0.5,0.5", transfer=[
        problem("arena-open.toml"), "--set", "problem.options.duration=10"]),
}
for name, case in cases.items():
    path = os.path.join(fixtures, name)
    a = raw(path)
    check(a["version"] == 1, f"{name}: the fixture is format 1")
    n = len(a["fitness"])

    text = run("inspect", path).stdout
    check("format 1" in text, f"{name}: inspect text names format 1")
    j = json.loads(run("inspect", path, "--format", "json").stdout)
    check(j["archive_format"] == 1 and j["extra_names"] == [], f"{name}: inspect json format 1")
    check(j["fitness_floor"] == a["offset"], f"{name}: fitness floor read from qd_offset")
    qd = 0.0
    for x in a["fitness"].tolist():
        qd += x - a["offset"]
    check(j["elites"] == n and j["qd_score"] == qd, f"{name}: inspect elites and QD-score")

    # query: the nearest elite by scaled Euclidean distance, found with numpy.
    q = json.loads(run("query", path, f"--target={case['target']}", "--format", "json").stdout)
    with h5py.File(path, "r") as f:
        lo, hi = f["space/lower"][...], f["space/upper"][...]
    target = np.array([float(v) for v in case["target"].split(",")])
    dist = np.linalg.norm((a["descriptor"] - target) / (hi - lo), axis=1)
    nearest = int(np.argmin(dist))
    check(q["matches"][0]["cell"] == int(a["cell"][nearest]), f"{name}: query nearest elite")
    check("extras" not in q["matches"][0], f"{name}: no extras column for format 1")

    # front on fitness (max) and x (min): every listed elite is non-dominated.
    fr = json.loads(run("front", path, "--objective", "fitness:max", "--objective", "x:min",
                        "--format", "json").stdout)
    pts = np.stack([a["fitness"], a["descriptor"][:, 0]], axis=1)
    rows = [int(np.nonzero(a["cell"] == r["cell"])[0][0]) for r in fr["front"]]
    check(len(rows) > 0, f"{name}: front not empty")
    check(all(not np.any((pts[:, 0] >= pts[i, 0]) & (pts[:, 1] <= pts[i, 1]) &
                         ((pts[:, 0] > pts[i, 0]) | (pts[:, 1] < pts[i, 1]))) for i in rows),
          f"{name}: front rows are non-dominated")
    p = run("front", path, "--objective", "fitness:max", "--objective", "mu:min", check=False)
    check(p.returncode == 2 and "format 1 archives keep none" in p.stderr,
          f"{name}: an unknown figure is refused, saying format 1 keeps no extras")

    # report writes its pages.
    report = os.path.join(work, name + "-report")
    run("report", path, "--out", report)
    check(os.path.isfile(os.path.join(report, "index.html")), f"{name}: report written")

    # transfer: the source figures are the stored fitness; nothing else was stored.
    t = json.loads(run("transfer", path, "--to", *case["transfer"], "--format", "json",
                       "-j", 2).stdout)
    check(len(t["elites"]) == n, f"{name}: transfer evaluates every elite")
    check(all(e["source_fitness"] == a["fitness"][e["elite"]] for e in t["elites"]),
          f"{name}: transfer source fitness is the stored one")
    check(not any(k.startswith("source_") and k != "source_fitness" for k in t["elites"][0]),
          f"{name}: no stored extras in a format 1 archive")

    # resume continues and writes format 2.
    copy = os.path.join(work, name)
    shutil.copy(path, copy)
    if "arena" in name:  # its stored run file names the layout by an absolute path
        point_arena_layout_at_shipped(copy)
    run("resume", copy, "-n", a["evaluations"] + 100, "--threads", 2, "--quiet")
    with h5py.File(copy, "r") as f:
        check(int(f.attrs["format_version"]) == 2, f"{name}: resumed archive is format 2")
        check(int(f.attrs["evaluations"]) == a["evaluations"] + 100, f"{name}: resumed budget")
        check("fitness_floor" in f["history"].attrs and
              float(f["history"].attrs["fitness_floor"]) == a["offset"],
              f"{name}: fitness floor carried over")
        fitness = f["elites/fitness"][...]
        cells = f["elites/cell"][...]
        extras = f["elites/extras"][...]
        if "arena" not in name:
            # The old elites keep their cells (improved or not); old ones have no figures.
            old = dict(zip(a["cell"].tolist(), a["fitness"].tolist()))
            new = dict(zip(cells.tolist(), fitness.tolist()))
            check(all(c in new and new[c] >= v for c, v in old.items()),
                  f"{name}: every old elite kept or improved")
            check(extras.shape == (len(fitness), 0), f"{name}: arm has no extra figures")
        else:
            # The format 1 reference map (resume arrays) becomes /elites over the 6 x 6 grid,
            # and the format 1 unstructured elites become the start of /novelty_archive.
            check(f["space"].attrs["kind"] == "grid" and len(fitness) <= 36,
                  f"{name}: resumed novelty run stores the reference grid")
            ref = dict(zip(a["resume"]["reference_cell"].astype(np.int64).tolist(),
                           a["resume"]["reference_fitness"].tolist()))
            new = dict(zip(cells.tolist(), fitness.tolist()))
            check(all(c in new and new[c] >= v for c, v in ref.items()),
                  f"{name}: the old reference map is kept or improved")
            nov = f["novelty_archive/genome"][...]
            check(np.array_equal(nov[:n], a["genome"]), f"{name}: old novelty archive kept")
            names = [x.decode() for x in f["elites/extra_names"][...]]
            check("path_length" in names and extras.shape == (len(fitness), len(names)),
                  f"{name}: the arena's figures are stored")
            kept = [i for i, c in enumerate(cells.tolist()) if c in ref and fitness[i] == ref[c]]
            check(all(np.all(np.isnan(extras[i])) for i in kept),
                  f"{name}: elites from the format 1 file have no recorded figures (NaN)")
            fresh = [i for i in range(len(fitness)) if i not in kept]
            check(all(np.all(np.isfinite(extras[i])) for i in fresh),
                  f"{name}: elites found after the resume have their figures")

shutil.rmtree(work, ignore_errors=True)
if failures:
    print(f"{len(failures)} checks failed")
    raise SystemExit(1)
print("all checks passed")
