# `tessera report`: the page renders in headless Chromium (Debian chromium) to a screenshot that
# is not blank (pixel statistics), every SVG file parses as XML (xml.etree), the page fetches
# nothing, and heatmap.png (decoded here from the PNG specification, with CRCs checked) shows
# exactly the archive's cells: for a grid every elite's block is coloured and every empty one
# white, with lightness rising with fitness (cividis; Spearman rank correlation, scipy.stats);
# for a CVT archive each pixel is coloured iff its nearest centroid (scipy cKDTree) holds an
# elite. A 3-descriptor archive (written with h5py) is mapped with --axes.
# Chromium is required: without it this test fails (scripts/setup-deps installs it).
# ctest-timeout: 900
import os
import re
import shutil
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import h5py
import numpy as np
from scipy.spatial import cKDTree
from scipy.stats import spearmanr

sys.path.insert(0, os.path.join(os.environ["TESSERA_SOURCE_DIR"], "tests", "reference"))
import selection_reference as ref  # noqa: E402

from tessera_test_util import SOURCE, Checks, run_expecting as run  # noqa: E402

check = Checks()


def luminance(rgb):
    return 0.2126 * rgb[..., 0] + 0.7152 * rgb[..., 1] + 0.0722 * rgb[..., 2]


def screenshot(html, png, tmp):
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        raise SystemExit("chromium is not installed: the report test needs it "
                         "(run scripts/setup-deps)")
    profile = tempfile.mkdtemp(dir=tmp)
    p = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                        "--no-first-run", "--disable-background-networking",
                        "--disable-component-update", "--disable-sync",
                        "--user-data-dir=" + profile, "--screenshot=" + png,
                        "--window-size=1200,1600", "file://" + html],
                       capture_output=True, text=True, timeout=300)
    if not os.path.exists(png):
        raise SystemExit("chromium wrote no screenshot (exit %d):\n%s" % (p.returncode, p.stderr))


def check_report(report, tmp, label):
    files = sorted(os.listdir(report))
    for name in ["index.html", "heatmap.svg", "heatmap.png", "coverage.svg", "qd-score.svg",
                 "max-fitness.svg"]:
        check(name in files, "%s: %s missing (%s)" % (label, name, files))
    for name in files:
        if name.endswith(".svg"):
            try:
                root = ET.parse(os.path.join(report, name)).getroot()
                check(root.tag == "{http://www.w3.org/2000/svg}svg", "%s/%s: root %s" %
                      (label, name, root.tag))
            except ET.ParseError as e:
                check(False, "%s/%s does not parse as XML: %s" % (label, name, e))
    html = open(os.path.join(report, "index.html"), encoding="utf-8").read()
    # Self-contained: no scripts, no external resources (the only URL is the SVG namespace).
    check("<script" not in html, label + ": page has a script")
    stripped = html.replace('xmlns="http://www.w3.org/2000/svg"', "")
    for needle in ["http:", "https:", "src=", "<link", "@import"]:
        check(needle not in stripped, "%s: page refers to %r" % (label, needle))
    check(html.count("<svg") >= 4, label + ": fewer than four inline SVG plots")

    shot = os.path.join(tmp, label + "-screenshot.png")
    screenshot(os.path.join(report, "index.html"), shot, tmp)
    w, h, pixels = ref.read_png(shot)
    rgb = pixels[..., :3].astype(float)
    non_white = (rgb.min(axis=2) < 245).mean()
    colours = len(np.unique(pixels[..., :3].reshape(-1, 3), axis=0))
    print("%s: screenshot %dx%d, non-white %.1f%%, %d colours, std %.1f" %
          (label, w, h, 100 * non_white, colours, rgb.std()))
    check((w, h) == (1200, 1600), "%s: screenshot size %dx%d" % (label, w, h))
    check(non_white > 0.05, "%s: screenshot nearly blank (%.3f non-white)" % (label, non_white))
    check(colours > 200, "%s: only %d colours in the screenshot" % (label, colours))
    check(rgb.std() > 20, "%s: flat screenshot (std %.1f)" % (label, rgb.std()))


with tempfile.TemporaryDirectory() as tmp:
    # Grid archive with a front.
    grid_dir = os.path.join(tmp, "grid")
    run("illuminate", os.path.join(SOURCE, "problems", "arm.toml"), "--out", grid_dir, "-q",
        "--set", "search.evaluations=8000", "--set", "search.batch=500")
    grid = os.path.join(grid_dir, "archive.h5")
    report = os.path.join(tmp, "grid-report")
    run("report", grid, "--out", report, "--objective", "fitness:max", "--objective", "x:max")
    check_report(report, tmp, "grid")
    check(os.path.exists(os.path.join(report, "front.svg")), "grid: front.svg missing")
    a = ref.load_archive(grid)
    w, h, img = ref.read_png(os.path.join(report, "heatmap.png"))
    nx, ny = (int(r) for r in a["resolution"])
    block = w // nx
    check(w == nx * block and h == ny * block, "grid heatmap.png is %dx%d for %dx%d cells" %
          (w, h, nx, ny))
    kx, ky = a["cell"] // ny, a["cell"] % ny  # row-major, last dimension (y) fastest
    centre = img[(ny - 1 - ky) * block + block // 2, kx * block + block // 2, :3].astype(float)
    check((centre.min(axis=1) < 250).all(), "grid heatmap: an elite's cell is white")
    filled = np.zeros((nx, ny), dtype=bool)
    filled[kx, ky] = True
    ex, ey = np.nonzero(~filled)
    empty = img[(ny - 1 - ey) * block + block // 2, ex * block + block // 2, :3]
    check((empty == 255).all(), "grid heatmap: an empty cell is coloured")
    rho = spearmanr(a["fitness"], luminance(centre)).correlation
    print("grid heatmap: Spearman(fitness, luminance) = %.4f" % rho)
    check(rho > 0.99, "grid heatmap: lightness does not follow fitness (rho %.3f)" % rho)

    # CVT archive.
    cvt_dir = os.path.join(tmp, "cvt")
    run("illuminate", os.path.join(SOURCE, "problems", "arm-cvt.toml"), "--out", cvt_dir, "-q",
        "--set", "search.evaluations=5000", "--set", "search.batch=500",
        "--set", "space.cells=300", "--set", "space.samples=20000")
    cvt = os.path.join(cvt_dir, "archive.h5")
    report = os.path.join(tmp, "cvt-report")
    run("report", cvt, "--out", report)
    check_report(report, tmp, "cvt")
    a = ref.load_archive(cvt)
    w, h, img = ref.read_png(os.path.join(report, "heatmap.png"))
    xs = a["lower"][0] + (np.arange(w) + 0.5) / w * (a["upper"][0] - a["lower"][0])
    ys = a["upper"][1] - (np.arange(h) + 0.5) / h * (a["upper"][1] - a["lower"][1])
    gx, gy = np.meshgrid(xs, ys)
    _, nearest = cKDTree(a["centroids"]).query(np.stack([gx.ravel(), gy.ravel()], axis=1))
    occupied = np.zeros(len(a["centroids"]), dtype=bool)
    occupied[a["cell"]] = True
    expected = occupied[nearest].reshape(h, w)
    coloured = img[..., :3].min(axis=2) < 255
    agree = (expected == coloured).mean()
    print("cvt heatmap: %.4f%% of pixels agree with the nearest centroid" % (100 * agree))
    check(agree > 0.999, "cvt heatmap: only %.4f of pixels agree with the cells" % agree)

    # Three descriptors (written with h5py from the CVT archive's attributes): --axes projects.
    three = os.path.join(tmp, "three.h5")
    rng = np.random.default_rng(3)
    centroids = rng.uniform([-1, 0, 5], [1, 10, 6], size=(200, 3))
    keep = np.flatnonzero(rng.uniform(size=200) < 0.7)
    with h5py.File(cvt, "r") as src, h5py.File(three, "w") as dst:
        for key, value in src.attrs.items():
            dst.attrs[key] = value
        # The stored run file must describe /space: 200 cells, no longer the source's.
        config = src.attrs["config"]
        config = config.decode() if isinstance(config, bytes) else config
        dst.attrs["config"] = re.sub(r"(?m)^cells = \d+", "cells = 200", config)
        src.copy(src["genome"], dst, "genome")
        src.copy(src["history"], dst, "history")
        space = dst.create_group("space")
        space.attrs["kind"] = src["space"].attrs["kind"]
        space["lower"] = np.array([-1.0, 0.0, 5.0])
        space["upper"] = np.array([1.0, 10.0, 6.0])
        space["centroids"] = centroids
        space.create_dataset("names", data=["speed", "height", "width"],
                             dtype=h5py.string_dtype("utf-8"))
        g = src["genome/lower"].shape[0]
        elites = dst.create_group("elites")
        elites["cell"] = keep.astype(np.int64)
        elites["genome"] = np.zeros((len(keep), g))
        elites["descriptor"] = centroids[keep]
        elites["fitness"] = -np.arange(len(keep), dtype=float)
        elites["birth"] = np.arange(len(keep), dtype=np.uint64)
        elites["extras"] = np.zeros((len(keep), 0))  # format 2: no extra figures
        elites.create_dataset("extra_names", shape=(0,), dtype=h5py.string_dtype("utf-8"))
    report = os.path.join(tmp, "three-report")
    run("report", three, "--out", report, "--axes", "width,speed")
    check_report(report, tmp, "three")
    svg = open(os.path.join(report, "heatmap.svg"), encoding="utf-8").read()
    check(">width<" in svg and ">speed<" in svg, "three: axis labels are not the chosen names")
    p = run("report", three, "--out", os.path.join(tmp, "never"), "--axes", "width,depth",
            expect=2)
    check("'depth'" in p.stderr and not os.path.exists(os.path.join(tmp, "never")),
          "--axes with an unknown name: %r" % p.stderr)

check.finish("report")
