# ctest-labels: linkage
"""`tessera illuminate problems/linkage-compact.toml` with a small budget, then `tessera trace`:
the traced joints (JSON and CSV, read here with json and numpy) form a rigid four-bar whose link
lengths stay those of the elite's genome (read with h5py) at every crank angle, whose crank and
rocker angles satisfy Freudenstein's loop-closure equation at every sample, whose coupler-point
path has the size stored as the elite's descriptor, and whose transmission angles obey the run's
40..140 degree rule; the trace carries the kinematics-only caution; bad input exits 2 with one
line and overwrites nothing; `tessera report` draws the linkage's scene with its traces."""
import json
import os
import shutil
import tempfile
import xml.etree.ElementTree as ET

import numpy as np
from tessera_test_util import run, problem, read_archive

work = tempfile.mkdtemp(prefix="tessera-linkage-")
try:
    out = os.path.join(work, "run")
    run("illuminate", problem("linkage-compact.toml"), "--out", out, "-n", 6000, "-j", 2, "--quiet")
    path = os.path.join(out, "archive.h5")
    a = read_archive(path)
    assert a["@problem"] == "linkage"
    genomes, desc, fit, cells = (a["elites/genome"], a["elites/descriptor"], a["elites/fitness"],
                                 a["elites/cell"])
    assert genomes.shape[1] == 6 and len(fit) > 20, genomes.shape
    d, ac, b, c = genomes[:, 0], genomes[:, 1], genomes[:, 2], genomes[:, 3]
    # Every elite is a Grashof crank-rocker: s + l <= p + q with the crank shortest (Norton,
    # Design of Machinery, sec. 2.12), recomputed here from the stored genomes.
    links = genomes[:, :4]
    s, l = links.min(axis=1), links.max(axis=1)
    assert np.all(s + l <= links.sum(axis=1) - s - l + 1e-9)
    assert np.all(ac == s)
    # The rule is on in the run file: every elite's worst transmission angle is at least 40.
    assert "transmission_limit = 40" in a["@config"]
    assert fit.min() >= 40.0 and fit.max() <= 90.0, (fit.min(), fit.max())

    def read_json(path):
        doc = json.load(open(path))
        assert doc["format"] == "tessera-trace" and doc["problem"] == "linkage"
        items = {item["name"]: item for item in doc["items"]}
        cols = lambda name: np.array(items[name]["rows"], dtype=float)
        return doc, items, cols

    def check_geometry(path, row):
        doc, items, cols = read_json(path)
        assert any("kinematic only" in c for c in doc["cautions"]), doc["cautions"]
        assert {"name": "units", "text": "mm, degrees"} in doc["notes"], doc["notes"]
        assert items["coupler point"]["columns"] == ["crank_deg", "x", "y"]
        assert items["coupler point"]["closed"] is True
        A, B, P = cols("crank pin"), cols("rocker pin"), cols("coupler point")
        samples = len(A)
        assert samples == 360 and len(B) == 360 and len(P) == 360, (len(A), len(B), len(P))
        pivots = cols("ground pivots")
        o2, o4 = pivots[0], pivots[1]
        g = genomes[row]
        np.testing.assert_allclose(doc["genome"], g, rtol=0, atol=0)
        angle = A[:, 0]
        A, B, P = A[:, 1:], B[:, 1:], P[:, 1:]
        norm = lambda v: np.hypot(v[:, 0], v[:, 1])
        # Rigid links: ground, crank, coupler, rocker keep the genome's lengths at every angle,
        # and the coupler point keeps its distance from A and its angle off A->B.
        np.testing.assert_allclose(np.hypot(*(o4 - o2)), g[0], rtol=1e-12)
        np.testing.assert_allclose(norm(A - o2), g[1], rtol=1e-12)
        np.testing.assert_allclose(norm(B - A), g[2], rtol=1e-9)
        np.testing.assert_allclose(norm(B - o4), g[3], rtol=1e-9)
        np.testing.assert_allclose(norm(P - A), g[4], rtol=1e-9, atol=1e-9)
        if g[4] > 1e-6:
            ang = np.degrees(np.arctan2(np.cross(B - A, P - A), np.einsum("ij,ij->i", B - A, P - A)))
            np.testing.assert_allclose(np.mod(ang - g[5] + 180, 360) - 180, 0, atol=1e-7)
        # The crank turns through one full revolution in equal steps.
        np.testing.assert_allclose(angle, np.arange(samples) * 360.0 / samples, atol=1e-9)
        # Freudenstein's equation (Norton, Design of Machinery, ch. 4): with K1 = d/a, K2 = d/c,
        # K3 = (a^2 - b^2 + c^2 + d^2) / (2ac), K1 cos t4 - K2 cos t2 + K3 = cos(t2 - t4) holds
        # at every sample, t2 and t4 measured from the traced pins.
        d, a, b, c = g[0], g[1], g[2], g[3]
        t2 = np.arctan2(A[:, 1], A[:, 0])
        t4 = np.arctan2(B[:, 1], B[:, 0] - d)
        k1, k2, k3 = d / a, d / c, (a * a - b * b + c * c + d * d) / (2 * a * c)
        np.testing.assert_allclose(k1 * np.cos(t4) - k2 * np.cos(t2) + k3, np.cos(t2 - t4),
                                   rtol=0, atol=1e-9)
        # Transmission angle from the positions (angle at B between B->A and B->O4).
        u, v = A - B, o4 - B
        mu = np.degrees(np.arccos(np.einsum("ij,ij->i", u, v) / (norm(u) * norm(v))))
        np.testing.assert_allclose(cols("transmission angle")[:, 1], mu, atol=1e-7)
        return P, mu

    # --- nearest to a wished path size ----------------------------------------------------
    out_json = os.path.join(work, "near.json")
    proc = run("trace", path, "--nearest", "60,40", "--out", out_json)
    assert "kinematic only" in proc.stdout and "machine-safety standards" in proc.stdout, proc.stdout
    lo, hi = a["space/lower"], a["space/upper"]
    scaled = (desc - lo) / (hi - lo)
    target = (np.array([60.0, 40.0]) - lo) / (hi - lo)
    row = int(np.argmin(((scaled - target) ** 2).sum(axis=1)))
    assert f"cell {cells[row]}," in proc.stdout, proc.stdout
    P, mu = check_geometry(out_json, row)
    # The path's size is the elite's stored descriptor (same 360 samples per revolution), and
    # the worst transmission angle is its fitness, inside the 40..140 degree rule.
    np.testing.assert_allclose([np.ptp(P[:, 0]), np.ptp(P[:, 1])], desc[row], rtol=1e-9)
    np.testing.assert_allclose(90 - np.abs(mu - 90).max(), fit[row], atol=1e-7)
    assert mu.min() >= 40 - 1e-9 and mu.max() <= 140 + 1e-9

    # --- the best, as CSV: the same numbers as the JSON -----------------------------------
    best = int(np.argmax(fit))
    out_json2 = os.path.join(work, "best.json")
    csv = os.path.join(work, "best.csv")
    run("trace", path, "--best", "--out", out_json2)
    run("trace", path, "--cell", cells[best], "--out", csv)
    check_geometry(out_json2, best)
    lines = open(csv).read().splitlines()
    comments = [x for x in lines if x.startswith("#")]
    assert any("kinematic only" in x for x in comments)
    assert any(x.startswith("# units: mm") for x in comments)
    header = lines[len(comments)].split(",")
    assert header[:4] == ["item", "x", "y", "crank_deg"], header
    table = [x.split(",") for x in lines[len(comments) + 1:]]
    _, items, cols = read_json(out_json2)
    coupler = np.array([[float(v) for v in r[1:4]] for r in table if r[0] == "coupler point"])
    np.testing.assert_array_equal(coupler[:, [2, 0, 1]], cols("coupler point"))

    # --- bad input: one line, exit 2, nothing overwritten ---------------------------------
    before = open(out_json).read()

    def refused(*args, expect):
        proc = run("trace", *args, check=False)
        assert proc.returncode == 2, (args, proc.returncode, proc.stderr)
        lines = proc.stderr.strip().splitlines()
        assert len(lines) == 1 and expect in lines[0], (args, proc.stderr)

    refused(path, "--nearest", "60,40", "--out", out_json, expect="already exists")
    free_cell = next(k for k in range(32 * 32) if k not in set(cells.tolist()))
    refused(path, "--cell", free_cell, "--out", out_json, "--force", expect="holds no elite")
    refused(path, "--nearest", "60", "--out", out_json, "--force", expect="--nearest")
    refused(path, "--out", out_json, "--force", expect="exactly one of")
    refused(path, "--best", "--out", os.path.join(work, "x.txt"), expect=".csv or .json")
    refused(os.path.join(work, "missing.h5"), "--cell", 0, "--out", out_json, "--force",
            expect="missing.h5")
    refused(path, "--cell", cells[0], "--out", os.path.join(work, "no", "x.json"),
            expect="does not exist")
    assert open(out_json).read() == before

    # --- report: the scene with the traces of the best elites -----------------------------
    rep = os.path.join(work, "report")
    run("report", path, "--out", rep)
    html = open(os.path.join(rep, "index.html")).read()
    assert "Scene: linkage, with the traces of 5 elites" in html
    assert "Traces one by one" in html and "transmission angle" in html
    panels = sorted(f for f in os.listdir(rep) if f.startswith("panel-"))
    assert len(panels) == 3, panels
    for f in panels:
        root = ET.parse(os.path.join(rep, f)).getroot()  # well-formed standalone SVG
        assert root.tag.endswith("svg")
    # Five closed coupler paths in the scene panel, one per traced elite.
    scene_svg = ET.parse(os.path.join(rep, panels[0])).getroot()
    assert len(scene_svg.findall(".//{http://www.w3.org/2000/svg}polygon")) >= 5
finally:
    shutil.rmtree(work, ignore_errors=True)
print("linkage trace ok")
