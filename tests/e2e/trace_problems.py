# ctest-labels: plugins;report
"""`tessera trace` and the report's scene panels for every kind of problem, checked against the
physics the traces draw (numbers read with json and h5py):
- arm (plugin): the traced end joint is the elite's stored descriptor, every link 1/n long;
- arena (plugin): the traced path starts at the layout's start and ends at the stored final
  position (descriptor x arena size); the hardware caution is printed and written;
- arm worker (external process answering scene and trace requests): the same end-joint check;
- sphere-proj (ABI version 2 without the optional exports) and legacy-v1 (a plugin built against
  the version 1 header): `trace` says in one line that the problem gives no traces, and the
  report has no scene panel but everything else;
- gait (when MuJoCo is present): fitness = final torso x minus the fall and collision penalties
  (0, 1 or 2 with the default penalties of 1)."""
import json
import os
import re
import shutil
import tempfile

import numpy as np
from tessera_test_util import run, problem, read_archive

work = tempfile.mkdtemp(prefix="tessera-trace-")
test_plugins = os.path.join(os.environ["TESSERA_BINARY_DIR"], "tests", "plugins")
os.environ["TESSERA_PLUGIN_PATH"] = os.environ["TESSERA_PLUGIN_PATH"] + ":" + test_plugins


def illuminate(run_file, name, evaluations, *extra):
    out = os.path.join(work, name)
    run("illuminate", run_file, "--out", out, "-n", evaluations, "--quiet", *extra)
    return os.path.join(out, "archive.h5")


def trace(archive, name, *choice):
    path = os.path.join(work, name + ".json")
    proc = run("trace", archive, *(choice or ("--best",)), "--out", path)
    return proc, json.load(open(path))


def rows(doc, name):
    return np.array(next(i for i in doc["items"] if i["name"] == name)["rows"], dtype=float)


def report(archive, name):
    out = os.path.join(work, "report-" + name)
    run("report", archive, "--out", out, "--traces", 3)
    return out, open(os.path.join(out, "index.html")).read()


def best_row(archive):
    a = read_archive(archive)
    return a, int(np.argmax(a["elites/fitness"]))


try:
    # --- arm: end joint = stored descriptor -----------------------------------------------
    arm = illuminate(problem("arm.toml"), "arm", 3000)
    a, best = best_row(arm)
    proc, doc = trace(arm, "arm")
    joints = rows(doc, "joints")
    n = a["elites/genome"].shape[1]
    assert joints.shape == (n + 1, 3), joints.shape
    np.testing.assert_allclose(joints[-1, 1:], a["elites/descriptor"][best], rtol=0, atol=1e-12)
    np.testing.assert_allclose(np.hypot(*np.diff(joints[:, 1:], axis=0).T), 1.0 / n, rtol=1e-12)
    assert doc["cell"] == int(a["elites/cell"][best])
    # Any cell, and the nearest to a target, trace that elite.
    for row in (0, len(a["elites/cell"]) // 2):
        _, doc = trace(arm, "arm-cell", "--cell", int(a["elites/cell"][row]))
        np.testing.assert_allclose(rows(doc, "joints")[-1, 1:], a["elites/descriptor"][row],
                                   atol=1e-12)
        os.remove(os.path.join(work, "arm-cell.json"))
    out, html = report(arm, "arm")
    assert "Scene: arm, with the traces of 3 elites" in html
    assert "grey dots: the end effector of every elite" in html
    # The drawn elites are spread over the map: greedy farthest-point selection (Gonzalez,
    # Theoretical Computer Science 38, 1985) from the fittest, in descriptors scaled by the
    # descriptor box, recomputed here with numpy; ties go to the row stored first.
    scaled = (a["elites/descriptor"] - a["space/lower"]) / (a["space/upper"] - a["space/lower"])
    picked = [int(np.argmax(a["elites/fitness"]))]
    nearest = np.full(len(scaled), np.inf)
    while len(picked) < 3:
        nearest = np.minimum(nearest, ((scaled - scaled[picked[-1]]) ** 2).sum(axis=1))
        picked.append(int(np.argmax(nearest)))
    drawn = list(dict.fromkeys(int(c) for c in re.findall(r">cell (\d+), fitness", html)))
    expected = [int(a["elites/cell"][r]) for r in picked]
    assert drawn == expected, (drawn, expected)

    # --- arena: the path ends at the stored final position ---------------------------------
    arena = illuminate(problem("arena-open.toml"), "arena", 400, "--set", "search.batch=100")
    a, best = best_row(arena)
    proc, doc = trace(arena, "arena")
    path = rows(doc, "path")
    np.testing.assert_allclose(path[0, 1:], [2.0, 2.0])  # "start 2 2 45" in arenas/open.txt
    np.testing.assert_allclose(path[-1, 1:] / 10.0, a["elites/descriptor"][best], rtol=1e-14)
    assert "caution: before a genome drives real hardware" in proc.stdout, proc.stdout
    assert any("real hardware" in c for c in doc["cautions"])
    np.testing.assert_allclose(np.diff(path[:, 0]), 0.2, rtol=1e-9)  # one row per 0.2 s step
    out, html = report(arena, "arena")
    assert "Scene: arena" in html and "final position of every elite" in html

    # --- an external worker answering scene and trace requests ------------------------------
    worker = illuminate(problem("examples/arm-process.toml"), "worker", 1024,
                        "--set", "search.batch=256")
    a, best = best_row(worker)
    _, doc = trace(worker, "worker")
    np.testing.assert_allclose(rows(doc, "joints")[-1, 1:], a["elites/descriptor"][best],
                               atol=1e-12)
    out, html = report(worker, "worker")
    assert "Scene: arm-python" in html

    # --- problems without traces -------------------------------------------------------------
    legacy_run = os.path.join(work, "legacy.toml")
    with open(legacy_run, "w") as f:
        f.write('[problem]\nname = "legacy-v1"\n[space]\nkind = "grid"\nresolution = [10, 10]\n'
                '[search]\nevaluations = 500\nbatch = 100\n')
    for name, run_file, evaluations in (("sphere", problem("sphere-proj.toml"), 600),
                                        ("legacy", legacy_run, 500)):
        archive = illuminate(run_file, name, evaluations, "--set", "search.batch=100")
        target = os.path.join(work, name + ".csv")
        proc = run("trace", archive, "--best", "--out", target, check=False)
        lines = proc.stderr.strip().splitlines()
        assert proc.returncode == 2 and len(lines) == 1, (proc.returncode, proc.stderr)
        assert "gives no traces" in lines[0], lines
        assert not os.path.exists(target)
        out, html = report(archive, name)
        assert "Scene:" not in html and "Fitness map" in html and "Progress" in html
        assert not [f for f in os.listdir(out) if f.startswith("panel-")]

    # --- gait, when the MuJoCo plugin is built ---------------------------------------------
    gait_plugin = os.path.join(os.environ["TESSERA_BINARY_DIR"], "plugins",
                               "tessera-plugin-gait.so")
    if os.path.exists(gait_plugin):
        gait = illuminate(problem("gait.toml"), "gait", 64, "--set", "search.batch=32",
                          "--set", "problem.options.duration=1.0")
        a, best = best_row(gait)
        proc, doc = trace(gait, "gait")
        torso = rows(doc, "torso path")
        np.testing.assert_allclose(torso[0], [0.0, 0.0, 0.0], atol=1e-12)
        penalty = torso[-1, 1] - a["elites/fitness"][best]
        assert min(abs(penalty - p) for p in (0.0, 1.0, 2.0)) < 1e-9, penalty
        assert "real hardware" in proc.stdout
        feet = rows(doc, "feet on the floor")
        assert feet.shape[1] == 7 and set(np.unique(feet[:, 1:])) <= {0.0, 1.0}
finally:
    shutil.rmtree(work, ignore_errors=True)
print("trace problems ok")
