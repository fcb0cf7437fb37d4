# ctest-labels: adaptation
"""`tessera adapt` on the planar arm with a stuck joint: recovery by trial and error
over the intact arm's repertoire (Cully, Clune, Tarapore & Mouret, Nature 2015).

Checked against outside references: every measured value equals numpy's forward kinematics of
the damaged arm (README.md arm definition; Craig, Introduction to Robotics); the first trial is
the elite h5py finds closest to the target (the UCB choice when every sigma is equal); the choice
reaches the target clearly better than that elite, within the trial budget; the trial log reads
back with h5py; --trial-process (a numpy worker speaking the evaluator protocol) gives the same
trials as the simulation; --ask reads typed numbers; bad input exits 2 and writes nothing."""
import json
import os

import h5py
import numpy as np
from tessera_test_util import SOURCE, run, problem, tempdir, read_archive

work = tempdir()
os.environ["TESSERA_CACHE_DIR"] = work
damage_file = problem("arm-damage-stuck.toml")
STUCK_JOINT, STUCK_ANGLE, TARGET = 2, 0.8, np.array([-0.5, 0.3])  # as in that file

# --- the intact arm's repertoire --------------------------------------------------------------
run("illuminate", problem("arm.toml"), "--out", work, "-n", 30000, "--seed", 1, "--quiet")
archive = os.path.join(work, "archive.h5")
a = read_archive(archive)
genomes, descriptors, cells = a["elites/genome"], a["elites/descriptor"], a["elites/cell"]


def damaged(theta):
    """The damaged arm's performance on the task (numpy reference)."""
    theta = np.array(theta, dtype=float)
    theta[STUCK_JOINT] = STUCK_ANGLE
    angles = np.cumsum(theta)
    p = np.array([np.cos(angles).sum(), np.sin(angles).sum()]) / theta.size
    return -np.hypot(*(p - TARGET))


# --- recovery in simulation -------------------------------------------------------------------
log = os.path.join(work, "trials.h5")
out = run("adapt", archive, "--on", damage_file, "--length-scale", 0.05, "--format", "json",
          "--log", log)
result = json.loads(out.stdout)
trials = result["trials"]
assert result["prior"] == "target" and result["source"] == "simulation"
assert 1 <= len(trials) <= 20, "more trials than the budget"
for t in trials:
    elite = t["elite"]
    assert cells[elite] == t["cell"]
    assert abs(t["measured"] - damaged(genomes[elite])) < 1e-12, t
    # The prior is what the intact arm would score: minus its descriptor's distance to the target.
    assert abs(t["prior"] + np.hypot(*(descriptors[elite] - TARGET))) < 1e-12
# First trial: the intact arm's best elite for the task (all sigmas equal before any trial).
intact_best = int(np.argmin(np.hypot(*(descriptors - TARGET).T)))
assert trials[0]["elite"] == intact_best, (trials[0], intact_best)
baseline = -trials[0]["measured"]          # distance reached by the intact best, damaged
chosen = -result["choice"]["measured"]     # distance reached by the adapted choice
intact = -trials[0]["prior"]               # distance the intact best reaches on the intact arm
assert result["choice"]["measured"] == max(t["measured"] for t in trials)
print(f"arm, joint {STUCK_JOINT} stuck at {STUCK_ANGLE} rad: {len(trials)} trials; distance to the "
      f"target {baseline:.3f} (intact best) -> {chosen:.3f} (adapted), intact arm {intact:.3f}; "
      f"fraction of the loss recovered {(baseline - chosen) / (baseline - intact):.2f}")
assert baseline >= 0.2, "the damage should matter for the intact best elite"
assert chosen <= 0.5 * baseline, "the adapted choice should reach clearly closer"

# The trial log, read back with h5py.
with h5py.File(log, "r") as f:
    assert f.attrs["format"] == "tessera-trial-log" and f.attrs["format_version"] == 1
    g = f["trials"]
    assert g["measured"].shape == (len(trials),)
    np.testing.assert_array_equal(g["measured"][()], [t["measured"] for t in trials])
    np.testing.assert_array_equal(g["cell"][()], [t["cell"] for t in trials])
    np.testing.assert_array_equal(g["genome"][()], genomes[[t["elite"] for t in trials]])
    assert g["measured_descriptor"].shape == (len(trials), 2)
    assert g.attrs["chosen"] == result["choice"]["trial"] - 1
    assert abs(g.attrs["length_scale"] - 0.05) < 1e-15 and abs(g.attrs["kappa"] - 0.05) < 1e-15

# Text output: one line per trial, the choice and the hardware caution.
text = run("adapt", archive, "--on", damage_file, "--length-scale", 0.05).stdout
assert "choice: trial" in text and "validate it in simulation first" in text, text
assert "emergency stop" in text and "safety rules" in text

# --- trials from a process speaking the evaluator line protocol (a robot harness stand-in) ----
worker = (f"/usr/bin/python3 {SOURCE}/tests/reference/arm_damaged_worker.py {STUCK_JOINT} "
          f"{STUCK_ANGLE} {TARGET[0]} {TARGET[1]}")
proc = run("adapt", archive, "--on", damage_file, "--length-scale", 0.05, "--format", "json",
           "--trial-process", worker)
remote = json.loads(proc.stdout)
assert remote["source"].startswith("process: ")
assert [t["cell"] for t in remote["trials"]] == [t["cell"] for t in trials]
for r, t in zip(remote["trials"], trials):
    assert abs(r["measured"] - t["measured"]) < 1e-12
assert "emergency stop" in proc.stderr, "a run that can drive hardware must say the caution"
# A harness that fails ends the trials at once (no more genomes sent to it): exit 1.
proc = run("adapt", archive, "--trial-process", "false", check=False)
assert proc.returncode == 1 and "gave no measurement" in proc.stdout, proc.stdout + proc.stderr

# --- trials typed by the operator -------------------------------------------------------------
proc = run("adapt", archive, "--on", damage_file, "--ask", "--format", "json", "--length-scale",
           0.05, "--stop-fraction", 1, input="-0.9\nnot a number\n-0.95\nstop\n")
typed = json.loads(proc.stdout)
assert [t["measured"] for t in typed["trials"]] == [-0.9, -0.95], typed["trials"]
assert typed["choice"]["measured"] == -0.9 and typed["choice"]["trial"] == 1
assert "operator ended" in typed["stop_reason"]
assert "is not a number" in proc.stderr and "emergency stop" in proc.stderr
assert "genome of cell" in proc.stderr

# --- bad input: exit 2, one line naming the file, nothing written -----------------------------
def refused(*args, expect):
    proc = run(*args, check=False)
    assert proc.returncode == 2, (args, proc.returncode, proc.stderr)
    assert expect in proc.stderr, (expect, proc.stderr)
    assert len(proc.stderr.strip().splitlines()) == 1, proc.stderr


missing = os.path.join(work, "missing.h5")
refused("adapt", missing, "--on", damage_file, expect=missing)
refused("adapt", archive, "--on", problem("gait-damage-stuck-joint.toml"),
        expect="gait-damage-stuck-joint.toml: problem 'gait' differs from the archive's")
refused("adapt", archive, "--on", damage_file, "--kappa", -1, expect="kappa")
refused("adapt", archive, "--on", damage_file, "--stop-fraction", 1.5, expect="stop fraction")
refused("adapt", archive, "--ask", "--trial-process", "cat", expect="choose one")
refused("adapt", archive, expect="--on RUNFILE")
nowhere = os.path.join(work, "no-such-folder", "trials.h5")
refused("adapt", archive, "--on", damage_file, "--log", nowhere, expect="does not exist")
assert not os.path.exists(os.path.dirname(nowhere))
before = os.path.getmtime(log), open(log, "rb").read()
refused("adapt", archive, "--on", damage_file, "--log", log, "--set",
        "problem.options.stuck_joint=99", expect="stuck_joint")
assert (os.path.getmtime(log), open(log, "rb").read()) == before, "the log was touched"
print("adapt_arm: ok")
