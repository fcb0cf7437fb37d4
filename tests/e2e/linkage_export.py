# ctest-labels: linkage
"""`tessera illuminate problems/linkage-compact.toml` with a small budget, then `tessera
export-linkage`: the CSV (read with numpy) holds a rigid four-bar whose link lengths stay those of
the elite's genome (read with h5py) at every crank angle, whose coupler-point path has the size
stored as the elite's descriptor, and whose transmission angles obey the run's 40..140 degree rule;
the export prints the kinematics-only caution; bad input exits 2 with one line and overwrites
nothing; `tessera report` draws the linkage panels."""
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

    def read_csv(csv):
        with open(csv) as f:
            lines = f.read().splitlines()
        comments = [x for x in lines if x.startswith("#")]
        header = lines[len(comments)].split(",")
        data = np.loadtxt(csv, delimiter=",", comments="#", skiprows=len(comments) + 1, ndmin=2)
        return comments, header, data

    def check_geometry(csv, row, samples):
        comments, header, data = read_csv(csv)
        assert data.shape == (samples, 12), data.shape
        assert header[0] == "crank_angle_deg" and header[-1] == "transmission_angle_deg"
        assert "a_x_mm" in header and "p_y_mm" in header  # units in the column names
        assert any("lengths in mm" in x for x in comments)
        assert any("kinematic only" in x for x in comments)
        col = {name: data[:, i] for i, name in enumerate(header)}
        o2 = np.stack([col["o2_x_mm"], col["o2_y_mm"]], 1)
        o4 = np.stack([col["o4_x_mm"], col["o4_y_mm"]], 1)
        A = np.stack([col["a_x_mm"], col["a_y_mm"]], 1)
        B = np.stack([col["b_x_mm"], col["b_y_mm"]], 1)
        P = np.stack([col["p_x_mm"], col["p_y_mm"]], 1)
        g = genomes[row]
        norm = lambda v: np.hypot(v[:, 0], v[:, 1])
        # Rigid links: ground, crank, coupler, rocker keep the genome's lengths at every angle,
        # and the coupler point keeps its distance from A and its angle off A->B.
        np.testing.assert_allclose(norm(o4 - o2), g[0], rtol=1e-12)
        np.testing.assert_allclose(norm(A - o2), g[1], rtol=1e-12)
        np.testing.assert_allclose(norm(B - A), g[2], rtol=1e-9)
        np.testing.assert_allclose(norm(B - o4), g[3], rtol=1e-9)
        np.testing.assert_allclose(norm(P - A), g[4], rtol=1e-9, atol=1e-9)
        if g[4] > 1e-6:
            ang = np.degrees(np.arctan2(np.cross(B - A, P - A), np.einsum("ij,ij->i", B - A, P - A)))
            np.testing.assert_allclose(np.mod(ang - g[5] + 180, 360) - 180, 0, atol=1e-7)
        # The crank turns through one full revolution in equal steps.
        np.testing.assert_allclose(col["crank_angle_deg"], np.arange(samples) * 360.0 / samples,
                                   atol=1e-9)
        # Transmission angle from the positions (angle at B between B->A and B->O4).
        u, v = A - B, o4 - B
        mu = np.degrees(np.arccos(np.einsum("ij,ij->i", u, v) / (norm(u) * norm(v))))
        np.testing.assert_allclose(col["transmission_angle_deg"], mu, atol=1e-7)
        return P, mu

    # --- nearest to a wished path size ----------------------------------------------------
    csv = os.path.join(work, "near.csv")
    proc = run("export-linkage", path, "--nearest", "60,40", "--out", csv)
    assert "kinematic only" in proc.stdout and "machine-safety standards" in proc.stdout, proc.stdout
    row = int(np.argmin((desc[:, 0] - 60) ** 2 + (desc[:, 1] - 40) ** 2))
    assert f"cell {cells[row]}," in proc.stdout, proc.stdout
    P, mu = check_geometry(csv, row, 360)
    # The path's size is the elite's stored descriptor (same 360 samples per revolution), and
    # the worst transmission angle is its fitness, inside the 40..140 degree rule.
    np.testing.assert_allclose([np.ptp(P[:, 0]), np.ptp(P[:, 1])], desc[row], rtol=1e-9)
    np.testing.assert_allclose(90 - np.abs(mu - 90).max(), fit[row], atol=1e-7)
    assert mu.min() >= 40 - 1e-9 and mu.max() <= 140 + 1e-9

    # --- by cell, finer sampling ----------------------------------------------------------
    best = int(np.argmax(fit))
    csv2 = os.path.join(work, "best.csv")
    run("export-linkage", path, "--cell", cells[best], "--samples", 720, "--out", csv2)
    check_geometry(csv2, best, 720)

    # --- bad input: one line, exit 2, nothing overwritten ---------------------------------
    before = open(csv).read()

    def refused(*args, expect):
        proc = run("export-linkage", *args, check=False)
        assert proc.returncode == 2, (args, proc.returncode, proc.stderr)
        lines = proc.stderr.strip().splitlines()
        assert len(lines) == 1 and expect in lines[0], (args, proc.stderr)

    refused(path, "--nearest", "60,40", "--out", csv, expect="already exists")
    free_cell = next(k for k in range(32 * 32) if k not in set(cells.tolist()))
    refused(path, "--cell", free_cell, "--out", csv, "--force", expect="holds no elite")
    refused(path, "--nearest", "60", "--out", csv, "--force", expect="--nearest")
    refused(path, "--out", csv, "--force", expect="exactly one of")
    refused(os.path.join(work, "missing.h5"), "--cell", 0, "--out", csv, "--force",
            expect="missing.h5")
    refused(path, "--cell", cells[0], "--out", os.path.join(work, "no", "x.csv"),
            expect="does not exist")
    arm = os.path.join(work, "arm")
    run("illuminate", problem("arm.toml"), "--out", arm, "-n", 512, "--quiet")
    refused(os.path.join(arm, "archive.h5"), "--cell", 0, "--out", csv, "--force",
            expect="not 'linkage'")
    assert open(csv).read() == before

    # --- report: the coupler-path panels --------------------------------------------------
    rep = os.path.join(work, "report")
    run("report", path, "--out", rep)
    html = open(os.path.join(rep, "index.html")).read()
    assert "Linkage: best elite" in html and "coupler paths across the map" in html
    panels = sorted(f for f in os.listdir(rep) if f.startswith("panel-"))
    assert len(panels) == 2, panels
    for f in panels:
        root = ET.parse(os.path.join(rep, f)).getroot()  # well-formed standalone SVG
        assert root.tag.endswith("svg")
        assert len(root.findall(".//{http://www.w3.org/2000/svg}polygon")) >= 2
finally:
    shutil.rmtree(work, ignore_errors=True)
print("linkage export ok")
