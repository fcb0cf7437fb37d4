# h5py (Debian python3-h5py, built on the HDF5 reference library) reads every dataset and
# attribute of archives Tessera writes, with the types and shapes of archive format 2
# (docs/archive-format.md), and the figures of `tessera inspect --format json` equal those
# computed here from the raw datasets with numpy.
# Archives: a real `tessera illuminate problems/arm.toml` run (small budget), and deterministic
# grid, CVT, unstructured and empty archives from tests/tools/write_sample_archive.
# ctest-timeout: 600
import json
import math
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

TESSERA = os.environ["TESSERA"]
SOURCE = os.environ["TESSERA_SOURCE_DIR"]
SAMPLE_WRITER = os.path.join(os.environ["TESSERA_BINARY_DIR"], "tests", "tools",
                             "write_sample_archive")

failures = []


def check(condition, what):
    if not condition:
        failures.append(what)
        print("FAIL:", what)


def is_vlen_utf8_string(dtype):
    info = h5py.check_string_dtype(dtype)
    return info is not None and info.length is None and info.encoding == "utf-8"


def attr_is_vlen_utf8(obj, name):
    # The attribute's stored type, not h5py's decoded Python value.
    return is_vlen_utf8_string(obj.attrs.get_id(name).dtype)


def check_archive(path, label):
    print(f"== {label}: {path}")
    f = h5py.File(path, "r")
    # Root attributes.
    for name in ["format", "problem", "config", "tool_version"]:
        check(name in f.attrs and attr_is_vlen_utf8(f, name), f"{label}: /{name} is a UTF-8 string")
    check(f.attrs["format"] == "tessera-archive", f"{label}: format")
    check(np.issubdtype(f.attrs.get_id("format_version").dtype, np.integer)
          and int(f.attrs["format_version"]) == 2, f"{label}: format_version is the integer 2")
    for name in ["seed", "evaluations"]:
        check(f.attrs.get_id(name).dtype == np.uint64, f"{label}: {name} is uint64")

    space, genome, elites, history = f["space"], f["genome"], f["elites"], f["history"]
    kind = space.attrs["kind"]
    check(attr_is_vlen_utf8(space, "kind") and kind in ("grid", "cvt", "unstructured"),
          f"{label}: /space kind")
    lower, upper = space["lower"][...], space["upper"][...]
    d = lower.shape[0]
    check(lower.dtype == np.float64 and upper.dtype == np.float64 and upper.shape == (d,),
          f"{label}: /space bounds float64 [D]")
    check(np.all(np.isfinite(lower)) and np.all(lower < upper), f"{label}: /space bounds")
    names = space["names"]
    check(is_vlen_utf8_string(names.dtype) and names.shape == (d,), f"{label}: /space/names")
    names = [n.decode("utf-8") for n in names[...]]
    if kind == "grid":
        res = space["resolution"][...]
        check(res.dtype == np.int64 and res.shape == (d,) and np.all(res >= 1),
              f"{label}: /space/resolution int64 [D]")
        check("centroids" not in space, f"{label}: no centroids in a grid archive")
        cells = int(np.prod(res))
    elif kind == "cvt":
        centroids = space["centroids"][...]
        check(centroids.dtype == np.float64 and centroids.ndim == 2 and centroids.shape[1] == d,
              f"{label}: /space/centroids float64 [K, D]")
        check("resolution" not in space, f"{label}: no resolution in a CVT archive")
        cells = centroids.shape[0]
    else:
        cells = None

    glo, gup = genome["lower"][...], genome["upper"][...]
    g = glo.shape[0]
    check(glo.dtype == np.float64 and gup.shape == (g,) and np.all(glo < gup),
          f"{label}: /genome bounds float64 [G]")

    cell = elites["cell"][...]
    n = cell.shape[0]
    if cells is None:
        cells = n
    types = {"cell": (np.int64, (n,)), "genome": (np.float64, (n, g)),
             "descriptor": (np.float64, (n, d)), "fitness": (np.float64, (n,)),
             "birth": (np.uint64, (n,))}
    for name, (dtype, shape) in types.items():
        ds = elites[name]
        check(ds.dtype == dtype and ds.shape == shape, f"{label}: /elites/{name} {dtype} {shape}")
        # docs/archive-format.md: numeric datasets are stored with Fletcher-32 alone by default
        # (checkpoint.compress = true adds shuffle + deflate).
        check(ds.chunks is not None and ds.fletcher32 and ds.compression is None,
              f"{label}: /elites/{name} chunked, checksummed and stored uncompressed")
    # Format 2: every elite's extra figures [N, E] and their names [E].
    extra_names = elites["extra_names"]
    check(is_vlen_utf8_string(extra_names.dtype) and extra_names.ndim == 1,
          f"{label}: /elites/extra_names UTF-8 strings [E]")
    extra_names = [x.decode("utf-8") for x in extra_names[...]]
    extras = elites["extras"][...]
    check(extras.dtype == np.float64 and extras.shape == (n, len(extra_names)),
          f"{label}: /elites/extras float64 [N, E] {extras.shape}")
    fitness = elites["fitness"][...]
    desc = elites["descriptor"][...]
    gen = elites["genome"][...]
    birth = elites["birth"][...]
    check(np.all(np.isfinite(fitness)) and np.all(np.isfinite(desc)) and np.all(np.isfinite(gen)),
          f"{label}: stored values finite")
    check(np.all((cell >= 0) & (cell < cells)) and len(np.unique(cell)) == n,
          f"{label}: cells in range and distinct")

    hist = {k: history[k][...] for k in ["evaluations", "coverage", "qd_score", "max_fitness"]}
    t = hist["evaluations"].shape[0]
    check(hist["evaluations"].dtype == np.uint64, f"{label}: /history/evaluations uint64")
    for k in ["coverage", "qd_score", "max_fitness"]:
        check(hist[k].dtype == np.float64 and hist[k].shape == (t,), f"{label}: /history/{k}")
    check("qd_offset" not in history.attrs, f"{label}: no format 1 qd_offset")
    check(history.attrs.get_id("fitness_floor").dtype == np.float64,
          f"{label}: fitness_floor float64")
    qd_offset = float(history.attrs["fitness_floor"])

    resume = None
    if "resume" in f:
        r = f["resume"]
        check(attr_is_vlen_utf8(r, "algorithm"), f"{label}: /resume algorithm string")
        check(r.attrs.get_id("next_batch").dtype == np.uint64, f"{label}: /resume next_batch")
        counters = {}
        for k in r["counters"].attrs:
            check(r["counters"].attrs.get_id(k).dtype == np.uint64, f"{label}: counter {k} uint64")
            counters[k] = int(r["counters"].attrs[k])
        for k, ds in r["arrays"].items():
            check(ds.dtype == np.float64 and ds.ndim == 1, f"{label}: /resume/arrays/{k}")
            ds[...]
        resume = {"algorithm": r.attrs["algorithm"], "next_batch": int(r.attrs["next_batch"]),
                  "counters": counters}

    # What inspect says must equal what the datasets say.
    out = subprocess.run([TESSERA, "inspect", "--format", "json", path], capture_output=True,
                         text=True)
    check(out.returncode == 0 and out.stderr == "", f"{label}: inspect exits 0 quietly")
    j = json.loads(out.stdout)
    check(j["format"] == "tessera-inspect" and j["version"] == 2, f"{label}: inspect header")
    check(j["archive_format"] == 2, f"{label}: inspect names the archive format")
    check(j["extra_names"] == extra_names, f"{label}: inspect extra names")
    check(j["problem"] == f.attrs["problem"], f"{label}: problem")
    check(j["tool_version"] == f.attrs["tool_version"], f"{label}: tool_version")
    check(j["seed"] == int(f.attrs["seed"]), f"{label}: seed")
    check(j["evaluations"] == int(f.attrs["evaluations"]), f"{label}: evaluations")
    sp = j["space"]
    check(sp["kind"] == kind and sp["cells"] == cells and sp["dimensions"] == d,
          f"{label}: space kind/cells/dimensions")
    check(sp["lower"] == lower.tolist() and sp["upper"] == upper.tolist(), f"{label}: bounds")
    check(sp["names"] == names, f"{label}: descriptor names {sp['names']} vs {names}")
    check(sp["resolution"] == (res.tolist() if kind == "grid" else None), f"{label}: resolution")
    check(j["genome_size"] == g and j["elites"] == n, f"{label}: genome size, elites")
    check(j["coverage"] == (n / cells if cells else 0.0), f"{label}: coverage")
    check(j["fitness_floor"] == qd_offset, f"{label}: fitness_floor")
    # Summed in stored order, one IEEE addition at a time, as format 1 defines the QD-score.
    qd = 0.0
    for x in fitness.tolist():
        qd += x - qd_offset
    check(j["qd_score"] == qd, f"{label}: qd_score {j['qd_score']} vs {qd}")
    check(j["history_rows"] == t, f"{label}: history rows")
    if n == 0:
        check(j["max_fitness"] is None and j["best"] is None, f"{label}: no best elite")
    else:
        b = int(np.argmax(fitness))  # first of equals, as inspect promises
        check(j["max_fitness"] == float(fitness.max()), f"{label}: max_fitness")
        best = j["best"]
        check(best["index"] == b and best["cell"] == int(cell[b]) and
              best["fitness"] == float(fitness[b]) and best["birth"] == int(birth[b]),
              f"{label}: best elite index/cell/fitness/birth")
        check(best["genome"] == gen[b].tolist() and best["descriptor"] == desc[b].tolist(),
              f"{label}: best elite genome and descriptor")
        want = [x if math.isfinite(x) else None for x in extras[b].tolist()]
        check(best["extras"] == want, f"{label}: best elite extras {best['extras']} vs {want}")
    if resume is None:
        check(j["resume"] is None and j["counts"]["invalid"] is None, f"{label}: no resume state")
    else:
        c = resume["counters"]
        check(j["resume"] == {"algorithm": resume["algorithm"],
                              "next_batch": resume["next_batch"]}, f"{label}: resume")
        check(j["counts"]["invalid"] == c.get("invalid", 0) and
              j["counts"]["out_of_bounds"] == c.get("out_of_bounds", 0), f"{label}: counts")
        failed = {k[len("failed:"):]: v for k, v in c.items() if k.startswith("failed:")}
        check(j["counts"]["failures"] == failed, f"{label}: failures {j['counts']['failures']}")

    text = subprocess.run([TESSERA, "inspect", path], capture_output=True, text=True)
    check(text.returncode == 0 and f.attrs["problem"] in text.stdout and text.stderr == "",
          f"{label}: inspect text form")
    check("format 2" in text.stdout, f"{label}: inspect text names the format version")
    return f, dict(kind=kind, lower=lower, upper=upper, cell=cell, desc=desc, gen=gen,
                   fitness=fitness, hist=hist, cells=cells, qd_offset=qd_offset,
                   extra_names=extra_names, extras=extras,
                   res=res if kind == "grid" else None, glo=glo, gup=gup)


with tempfile.TemporaryDirectory(prefix="tessera-h5py-") as tmp:
    # 1. A real run of the shipped arm problem.
    run_dir = os.path.join(tmp, "arm")
    run = subprocess.run([TESSERA, "illuminate", os.path.join(SOURCE, "problems", "arm.toml"),
                          "--out", run_dir, "--evaluations", "4096", "--quiet", "--threads", "2"],
                         capture_output=True, text=True)
    check(run.returncode == 0, f"illuminate arm exits 0 ({run.returncode}: {run.stderr.strip()})")
    archive = os.path.join(run_dir, "archive.h5")
    if run.returncode == 0:
        f, a = check_archive(archive, "arm run")
        check(f.attrs["problem"] == "arm" and a["kind"] == "grid", "arm: grid archive of arm")
        check("[problem]" in f.attrs["config"], "arm: the resolved run file is stored")
        # Problem definition (README.md, Shipped problems): genome in [-pi, pi]^n, descriptor in
        # [-1, 1]^2, lowest fitness -pi^2 (the fitness floor).
        check(np.all(a["glo"] == -math.pi) and np.all(a["gup"] == math.pi), "arm: genome bounds")
        check(a["lower"].tolist() == [-1.0, -1.0] and a["upper"].tolist() == [1.0, 1.0],
              "arm: descriptor bounds")
        check(a["qd_offset"] == -math.pi ** 2, "arm: fitness_floor is -pi^2")
        check(a["extra_names"] == [] and a["extras"].shape == (len(a["fitness"]), 0),
              "arm: no extra figures, stored as [N, 0]")
        check(len(a["fitness"]) > 0, "arm: the run found elites")
        # Each elite lies in its cell: the grid formula of docs/archive-format.md, in numpy.
        k = np.floor((a["desc"] - a["lower"]) / (a["upper"] - a["lower"]) * a["res"])
        k = np.clip(k, 0, a["res"] - 1).astype(np.int64)
        flat = k[:, 0] * a["res"][1] + k[:, 1]
        check(np.array_equal(flat, a["cell"]), "arm: /elites/cell matches the grid formula")
        # The descriptor is the end effector (forward kinematics, Craig, Introduction to
        # Robotics) and the fitness minus the variance of the angles (README.md).
        angles = np.cumsum(a["gen"], axis=1)
        n_j = a["gen"].shape[1]
        effector = np.stack([np.cos(angles).sum(1), np.sin(angles).sum(1)], axis=1) / n_j
        check(np.allclose(effector, a["desc"], atol=1e-12), "arm: descriptors are end effectors")
        check(np.allclose(-a["gen"].var(axis=1), a["fitness"], atol=1e-12), "arm: fitness")
        # The last history row describes the archive as stored.
        h = a["hist"]
        check(len(h["evaluations"]) > 0 and int(h["evaluations"][-1]) == int(f.attrs["evaluations"]),
              "arm: last history row at the final evaluation count")
        check(h["coverage"][-1] == len(a["fitness"]) / a["cells"], "arm: last coverage")
        check(math.isclose(h["qd_score"][-1], float(np.sum(a["fitness"] - a["qd_offset"])),
                           rel_tol=1e-12), "arm: last QD-score")
        check(h["max_fitness"][-1] == a["fitness"].max(), "arm: last max fitness")

    # 2. Deterministic archives of every kind, with and without resume state, and empty.
    cases = [("grid", ["grid", "500", "13"]), ("cvt", ["cvt", "300", "5", "--extras=0"]),
             ("unstructured", ["unstructured", "200", "3", "7", "0", "--no-resume",
                               "--novelty-archive=31"]),
             ("empty grid", ["grid", "0", "4", "0"]), ("empty cvt", ["cvt", "0", "4", "0"])]
    for label, args in cases:
        path = os.path.join(tmp, label.replace(" ", "_") + ".h5")
        made = subprocess.run([SAMPLE_WRITER, args[0], path] + args[1:], capture_output=True,
                              text=True)
        check(made.returncode == 0, f"{label}: sample writer ({made.stderr.strip()})")
        if made.returncode == 0:
            f, a = check_archive(path, label)
            check(len(a["fitness"]) == int(args[1]), f"{label}: elite count")
            if label == "grid":
                # Values the sample writer puts in (tests/support/sample_snapshot.hpp).
                check(a["fitness"][0] == 0.0 and math.copysign(1, a["fitness"][0]) < 0,
                      "grid: negative zero kept")
                check(a["fitness"][1] == 5e-324, "grid: subnormal kept")
                check(f["space"]["names"][1].decode() == "höhe", "grid: UTF-8 name")
                check(a["extra_names"] == ["path_length", "goal_time", "état"],
                      "grid: extra names as written")
                x = a["extras"][:, 1]
                check(np.isnan(x[0]) and x[1] == -np.inf and x[2] == 0.0 and
                      math.copysign(1, x[2]) < 0 and x[3] == 5e-324 and x[4] == np.inf,
                      "grid: NaN, infinities, -0 and subnormal extras kept")
            if label == "unstructured":
                nov = f["novelty_archive"]
                m = nov["fitness"].shape[0]
                check(m == 31 and nov["genome"].shape == (m, a["gen"].shape[1]) and
                      nov["descriptor"].shape == (m, a["desc"].shape[1]) and
                      nov["birth"].dtype == np.uint64 and nov["fitness"].dtype == np.float64,
                      "unstructured: /novelty_archive shapes and types")
                j = json.loads(subprocess.run([TESSERA, "inspect", "--format", "json", path],
                                              capture_output=True, text=True).stdout)
                check(j["novelty_archive"] == 31, "unstructured: inspect counts the novelty archive")

if failures:
    print(f"{len(failures)} checks failed")
    sys.exit(1)
print("all checks passed")
