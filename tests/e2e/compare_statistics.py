# `tessera compare` end to end: three groups of small arm runs (Iso+LineDD, and Gaussian mutation
# with two step sizes, three seeds each); the statistics it prints as JSON and as long CSV equal a
# recomputation from the archives with h5py, numpy.percentile, scipy.stats.mannwhitneyu and
# Holm's definition (Holm, Scand. J. Statistics 1979); A12 by direct count of pairs (Vargha &
# Delaney 2000). A measures.csv with missing and censored values and a success measure is
# compared as well (scipy.stats.fisher_exact), missing runs counted and never taken as zero. The
# report renders in headless Chromium (Debian chromium), every SVG parses (xml.etree), every PNG
# decodes with its CRCs (PNG specification) and the page fetches nothing. Bad input is refused
# in one line with exit 2.
# ctest-labels: studies;statistics;slow
# ctest-timeout: 900
import csv
import glob
import io
import json
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET
import zlib

import h5py
import numpy as np
from scipy import stats

sys.path.insert(0, os.path.dirname(__file__))
sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "reference"))
import selection_reference as ref  # noqa: E402
from tessera_test_util import problem, run, tempdir  # noqa: E402

failures = []


def check(condition, message):
    if not condition:
        failures.append(message)


def close(a, b, rel=1e-9):
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)


def holm(ps):
    """Holm's adjusted p-values by the definition: sorted ascending, (m - j + 1) p_(j), running
    maximum, capped at 1."""
    order = sorted(range(len(ps)), key=lambda i: ps[i])
    out, running = [0.0] * len(ps), 0.0
    for j, i in enumerate(order):
        running = max(running, min(1.0, (len(ps) - j) * ps[i]))
        out[i] = running
    return out


def a12(x, y):
    wins = sum(1.0 if a > b else 0.5 if a == b else 0.0 for a in x for b in y)
    return wins / (len(x) * len(y))


tmp = tempdir()
groups = {
    "isoline": ["--set", 'search.operator="iso-line-dd"'],
    "gauss": ["--set", 'search.operator="gaussian"', "--set", "search.sigma=0.05"],
    "wide": ["--set", 'search.operator="gaussian"', "--set", "search.sigma=0.5"],
}
for label, sets in groups.items():
    for seed in (1, 2, 3):
        run("illuminate", problem("arm.toml"), "--out", os.path.join(tmp, f"{label}-{seed}"),
            "-n", 20000, "--seed", seed, "--quiet", *sets)

group_args = []
for label in groups:
    group_args += ["--group", f"{label}={tmp}/{label}-*/archive.h5"]
report = os.path.join(tmp, "report")
doc = json.loads(run("compare", *group_args, "--format", "json", "--reference", "gauss",
                     "--report", report).stdout)
check(doc["groups"] == list(groups), f"groups {doc['groups']}")
check(doc["reference"] == "gauss", "reference")
check(len(doc["comparisons"]) == 9, f"{len(doc['comparisons'])} comparisons, expected 3 x 3")
check([c["measure"] for c in doc["curves"]] == ["coverage", "qd_score", "max_fitness"], "curves")

# Recompute from the archives.
finals, histories = {}, {}
for label in groups:
    for path in sorted(glob.glob(f"{tmp}/{label}-*/archive.h5")):
        with h5py.File(path, "r") as f:
            h = {name: f["history"][name][()] for name in f["history"]}
        histories.setdefault(label, []).append(h)
        for m in ("coverage", "qd_score", "max_fitness"):
            finals.setdefault((m, label), []).append(float(h[m][-1]))

by_measure = {m["measure"]: m for m in doc["measures"]}
check(set(by_measure) == {"coverage", "qd_score", "max_fitness"}, f"measures {set(by_measure)}")
labels = list(groups)
for m in ("coverage", "qd_score", "max_fitness"):
    for g in by_measure[m]["groups"]:
        values = finals[(m, g["group"])]
        check(g["n"] == 3 and g["n_missing"] == 0, f"{m} {g['group']}: n {g['n']}")
        for key, q in (("q1", 25), ("median", 50), ("q3", 75)):
            check(close(g[key], float(np.percentile(values, q)), 1e-12),
                  f"{m} {g['group']} {key}: {g[key]} vs numpy {np.percentile(values, q)}")
    pairs = [c for c in doc["comparisons"] if c["measure"] == m]
    check([(c["a"], c["b"]) for c in pairs] ==
          [(labels[i], labels[j]) for i in range(3) for j in range(i + 1, 3)], f"{m}: pair order")
    ps = []
    for c in pairs:
        x, y = finals[(m, c["a"])], finals[(m, c["b"])]
        r = stats.mannwhitneyu(x, y, alternative="two-sided")
        ps.append(r.pvalue)
        check(c["n_a"] == 3 and c["n_b"] == 3, f"{m} {c['a']}-{c['b']}: sizes")
        check(c["u"] == r.statistic, f"{m} {c['a']}-{c['b']}: U {c['u']} vs scipy {r.statistic}")
        check(close(c["p"], r.pvalue), f"{m} {c['a']}-{c['b']}: p {c['p']} vs scipy {r.pvalue}")
        check(close(c["a12"], a12(x, y), 1e-15), f"{m} {c['a']}-{c['b']}: A12 {c['a12']}")
    for c, adjusted in zip(pairs, holm(ps)):
        check(close(c["p_holm"], adjusted), f"{m} {c['a']}-{c['b']}: p_holm {c['p_holm']} vs "
              f"{adjusted}")

# Curves: each run's value at a checkpoint is its last record at or before it.
for curve in doc["curves"]:
    m = curve["measure"]
    evals = curve["evaluations"]
    check(len(evals) >= 2 and evals == sorted(evals), f"{m}: checkpoints {evals[:5]}...")

    def at(label, e):
        out = []
        for h in histories[label]:
            idx = np.searchsorted(h["evaluations"], e, side="right") - 1
            if idx >= 0 and e <= h["evaluations"][-1]:
                out.append(float(h[m][idx]))
        return out

    for g in curve["groups"]:
        for k in (0, len(evals) // 2, len(evals) - 1):
            values = at(g["group"], evals[k])
            check(g["n"][k] == len(values), f"{m} {g['group']} @{evals[k]}: n")
            if values:
                check(close(g["median"][k], float(np.median(values)), 1e-12),
                      f"{m} {g['group']} @{evals[k]}: median {g['median'][k]}")
    tests_by_group = {}
    for t in curve["tests"]:
        tests_by_group.setdefault(t["group"], []).append(t)
    check(set(tests_by_group) == {"isoline", "wide"}, f"{m}: tested groups {set(tests_by_group)}")
    for label, tests in tests_by_group.items():
        ps = []
        for t in tests:
            x, y = at(label, t["evaluations"]), at("gauss", t["evaluations"])
            p = stats.mannwhitneyu(x, y, alternative="two-sided").pvalue
            ps.append(p)
            check(close(t["p"], p), f"{m} {label} @{t['evaluations']}: p {t['p']} vs {p}")
        for t, adjusted in zip(tests, holm(ps)):
            check(close(t["p_holm"], adjusted), f"{m} {label}: checkpoint Holm")
            check(t["significant"] == (adjusted < 0.05), f"{m} {label}: mark")

# Long CSV: the same numbers, one statistic per row.
rows = list(csv.DictReader(io.StringIO(run("compare", *group_args, "--format", "csv").stdout)))
check(rows and list(rows[0]) == ["measure", "a", "b", "evaluations", "statistic", "value"],
      "csv header")
for c in doc["comparisons"]:
    for stat in ("u", "p", "p_holm", "a12"):
        found = [r for r in rows if r["measure"] == c["measure"] and r["a"] == c["a"] and
                 r["b"] == c["b"] and r["evaluations"] == "" and r["statistic"] == stat]
        check(len(found) == 1 and float(found[0]["value"]) == c[stat],
              f"csv {c['measure']} {c['a']}-{c['b']} {stat}")
text = run("compare", *group_args, "--measure", "coverage").stdout
check("coverage" in text and "Holm" in text and "isoline" in text, "text output:\n" + text)
check("qd_score" not in text, "--measure selects")

# measures.csv: missing values, censored values, a success measure.
measures = os.path.join(tmp, "measures.csv")
rng = np.random.default_rng(5)
lines = ["group,run,measure,value,censored"]
table = {}
for g, shift, rate in (("novelty", 2.0, 0.9), ("objective", 0.0, 0.3), ("random", -1.0, 0.1)):
    for s in range(10):
        area = "" if (g == "objective" and s in (3, 7)) else repr(float(rng.normal() + shift))
        lines.append(f"{g},seed-{s},area,{area},0")
        if area:
            table.setdefault(("area", g), []).append(float(area))
        ok = int(rng.random() < rate)
        lines.append(f"{g},seed-{s},success,{ok},0")
        table.setdefault(("success", g), []).append(ok)
        reach = float(rng.integers(100, 900)) if ok else 1000.0
        lines.append(f"{g},seed-{s},readapt.goal-1,{reach:g},{0 if ok else 1}")
with open(measures, "w") as f:
    f.write("\n".join(lines) + "\n")
report2 = os.path.join(tmp, "report2")
doc2 = json.loads(run("compare", "--measures", measures, "--format", "json", "--report",
                      report2).stdout)
m2 = {m["measure"]: m for m in doc2["measures"]}
obj = [g for g in m2["area"]["groups"] if g["group"] == "objective"][0]
check(obj["n"] == 8 and obj["n_missing"] == 2, f"missing counted: {obj}")
check(close(obj["median"], float(np.median(table[("area", "objective")])), 1e-12),
      "median without the missing runs (never as zero)")
check(m2["success"]["binary"] and m2["success"]["test"] == "fisher exact", "success uses Fisher")
check(m2["readapt.goal-1"]["censored"], "censored measure flagged")
succ = [c for c in doc2["comparisons"] if c["measure"] == "success"]
ps = []
for c in succ:
    x, y = table[("success", c["a"])], table[("success", c["b"])]
    p = stats.fisher_exact([[sum(x), len(x) - sum(x)], [sum(y), len(y) - sum(y)]])[1]
    ps.append(p)
    check(close(c["p"], p), f"fisher {c['a']}-{c['b']}: {c['p']} vs scipy {p}")
    check(c["test"] == "fisher exact", "fisher test named")
for c, adjusted in zip(succ, holm(ps)):
    check(close(c["p_holm"], adjusted), "fisher Holm")


# Reports: every SVG parses, every PNG decodes, the page renders and fetches nothing.
def decode_png(path):
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "signature"
    pos, idat, width, height = 8, b"", 0, 0
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        crc = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])[0]
        assert zlib.crc32(kind + body) == crc, f"CRC of {kind}"
        if kind == b"IHDR":
            width, height = struct.unpack(">II", body[:8])
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    assert len(raw) == height * (1 + 3 * width), "pixel data size"
    rows = np.frombuffer(raw, dtype=np.uint8).reshape(height, 1 + 3 * width)
    return rows[:, 1:].reshape(height, width, 3)


def screenshot(html, png):
    browser = shutil.which("chromium") or shutil.which("chromium-browser")
    if browser is None:
        raise SystemExit("chromium is not installed: the report test needs it")
    profile = tempfile.mkdtemp(dir=tmp)
    p = subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                        "--no-first-run", "--disable-background-networking",
                        "--disable-component-update", "--disable-sync",
                        "--user-data-dir=" + profile, "--screenshot=" + png,
                        "--window-size=1200,1600", "file://" + html],
                       capture_output=True, text=True, timeout=300)
    if not os.path.exists(png):
        raise SystemExit("chromium wrote no screenshot (exit %d):\n%s" % (p.returncode, p.stderr))


for folder, kinds in ((report, ("box-", "curve-")), (report2, ("box-", "goals-"))):
    names = sorted(os.listdir(folder))
    check("index.html" in names, f"{folder}: index.html")
    svgs = [n for n in names if n.endswith(".svg")]
    for kind in kinds:
        check(any(n.startswith(kind) for n in svgs), f"{folder}: no {kind}*.svg")
    for n in svgs:
        size = None
        try:
            root = ET.parse(os.path.join(folder, n)).getroot()
            check(root.tag == "{http://www.w3.org/2000/svg}svg", f"{n}: root {root.tag}")
            size = (float(root.get("width")), float(root.get("height")))
        except ET.ParseError as e:
            failures.append(f"{n}: {e}")
        png = os.path.join(folder, n[:-4] + ".png")
        check(os.path.exists(png), f"{n}: no PNG beside it")
        if os.path.exists(png):
            pixels = decode_png(png)
            # The PNG is the same drawing at two pixels per SVG pixel.
            if size:
                check(pixels.shape[:2] == (int(np.ceil(2 * size[1])), int(np.ceil(2 * size[0]))),
                      f"{png}: {pixels.shape[:2]} pixels for an SVG of {size}")
            # Each group is drawn in its colour of Okabe & Ito's palette (first three: blue
            # 0,114,178; vermillion 213,94,0; bluish green 0,158,115).
            colours = {tuple(c) for c in np.unique(pixels.reshape(-1, 3), axis=0)}
            for rgb in ((0, 114, 178), (213, 94, 0), (0, 158, 115)):
                check(rgb in colours, f"{png}: group colour {rgb} not drawn")
            dark = (pixels.sum(axis=2) < 300).mean()
            check(0.001 < dark < 0.5, f"{png}: {dark:.4f} of the pixels dark (blank or black?)")
    page = open(os.path.join(folder, "index.html")).read()
    check("<script" not in page and "http://" not in page.replace(
        'xmlns="http://www.w3.org/2000/svg"', "") and "https://" not in page,
          f"{folder}: the page must fetch nothing")
    shot = os.path.join(tmp, os.path.basename(folder) + "-shot.png")
    screenshot(os.path.join(folder, "index.html"), shot)
    _, _, pixels = ref.read_png(shot)
    rgb = pixels[..., :3].astype(float)
    non_white = (rgb.min(axis=2) < 245).mean()
    check(non_white > 0.05 and rgb.std() > 20,
          f"{folder}: screenshot nearly blank ({non_white:.3f} non-white, std {rgb.std():.1f})")
page2 = open(os.path.join(report2, "index.html")).read()
check("missing" in page2 and "censored" in page2, "report 2 shows missing and censored runs")

# An archive that cannot be read is reported and counted as missing; the others go on.
os.makedirs(os.path.join(tmp, "broken-9"))
with open(os.path.join(tmp, "broken-9", "archive.h5"), "wb") as f:
    f.write(b"not an archive")
shutil.copytree(os.path.join(tmp, "gauss-1"), os.path.join(tmp, "broken-1"))
p = run("compare", "--group", f"broken={tmp}/broken-*/archive.h5", "--group",
        f"gauss={tmp}/gauss-*/archive.h5", "--format", "json")
check("broken-9" in p.stderr and "missing" in p.stderr, f"warning: {p.stderr!r}")
cov = [m for m in json.loads(p.stdout)["measures"] if m["measure"] == "coverage"][0]
check(cov["groups"][0]["n"] == 1 and cov["groups"][0]["n_missing"] == 1,
      f"unreadable archive counted as missing: {cov['groups'][0]}")
check(cov["groups"][0]["median"] == finals[("coverage", "gauss")][0], "median of the readable run")

# Bad input: one line, exit 2.
for args, needle in (
        (["--group", "nolabel"], "LABEL=GLOB"),
        (["--group", f"a={tmp}/none-*/archive.h5"], "matches no file"),
        (["--measures", os.path.join(tmp, "absent.csv")], "absent.csv"),
        (["--measures", measures, "--measure", "nope"], "nope"),
        (["--measures", measures, "--format", "xml"], "xml")):
    p = run("compare", *args, check=False)
    check(p.returncode == 2, f"{args}: exit {p.returncode}")
    check(needle in p.stderr and p.stderr.count("\n") == 1, f"{args}: stderr {p.stderr!r}")
bad = os.path.join(tmp, "bad.csv")
with open(bad, "w") as f:
    f.write("group,run,measure,value,censored\na,s1,area,zero,0\n")
p = run("compare", "--measures", bad, check=False)
check(p.returncode == 2 and "bad.csv: line 2" in p.stderr, f"bad value: {p.stderr!r}")

if failures:
    print("\n".join(failures))
    sys.exit(1)
shutil.rmtree(tmp)
print("compare statistics agree with scipy; reports render")
