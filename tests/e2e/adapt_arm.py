# ctest-labels: adaptation
"""`tessera adapt` on the planar arm with a stuck joint: recovery by trial and error
over the intact arm's repertoire (Cully, Clune, Tarapore & Mouret, Nature 2015).

Checked against outside references: every measured value equals numpy's forward kinematics of
the damaged arm (planar serial chain, Craig, Introduction to Robotics); the reference for the
result is a brute-force numpy re-evaluation of every elite of the map under the damage: the
shipped case (problems/arm.toml's map, problems/arm-damage-stuck.toml) must end within the
tolerance that run file states (0.02, 2 cm) of that best, and `--brute-force` must report the
same best. The stop rule must not call a trial far below the map's expectation a success (a
trial 13.6 cm from the target once stopped the loop). The first trial is the elite h5py finds
closest to the target (the UCB choice when every sigma is equal); --good-enough stops at the
first trial that reaches it; the trial log reads back with h5py; --trial-process (a numpy
worker speaking the evaluator protocol) gives the same trials as the simulation; --ask reads
typed numbers; bad input exits 2 and writes nothing."""
import json
import os

import h5py
import numpy as np
from tessera_test_util import SOURCE, run, problem, tempdir, read_archive

work = tempdir()
os.environ["TESSERA_CACHE_DIR"] = work
damage_file = problem("arm-damage-stuck.toml")
STUCK_JOINT, STUCK_ANGLE, TARGET = 2, 0.8, np.array([-0.5, 0.3])  # as in that file
TOLERANCE = 0.02  # stated in problems/arm-damage-stuck.toml

# --- the intact arm's repertoire: the shipped run file as it is -------------------------------
run("illuminate", problem("arm.toml"), "--out", work, "--quiet")
archive = os.path.join(work, "archive.h5")
a = read_archive(archive)
genomes, descriptors, cells = a["elites/genome"], a["elites/descriptor"], a["elites/cell"]


def damaged(theta):
    """The damaged arm's performance on the task (numpy reference), one row per genome."""
    theta = np.array(theta, dtype=float).reshape(-1, genomes.shape[1])
    theta[:, STUCK_JOINT] = STUCK_ANGLE
    angles = np.cumsum(theta, axis=1)
    p = np.stack([np.cos(angles).sum(1), np.sin(angles).sum(1)], axis=1) / theta.shape[1]
    return -np.hypot(*(p - TARGET).T)


brute = damaged(genomes)                    # every elite under the damage
brute_best = float(brute.max())
expected = -np.hypot(*(descriptors - TARGET).T)   # what the intact map expects of each elite
print(f"brute force: best elite under the damage {brute_best:.4f}; "
      f"{int((brute >= -0.05).sum())} elites within 5 cm of the target")

# --- recovery in simulation, default settings -------------------------------------------------
log = os.path.join(work, "trials.h5")
out = run("adapt", archive, "--on", damage_file, "--format", "json", "--log", log, "--brute-force")
result = json.loads(out.stdout)
trials = result["trials"]
assert result["prior"] == "target" and result["source"] == "simulation"
assert 1 <= len(trials) <= 20 and result["trials_used"] == len(trials), "trial budget"
for t in trials:
    elite = t["elite"]
    assert cells[elite] == t["cell"]
    assert abs(t["measured"] - damaged(genomes[elite])[0]) < 1e-12, t
    # The prior is what the intact arm would score: minus its descriptor's distance to the target.
    assert abs(t["prior"] - expected[elite]) < 1e-12
# First trial: the intact arm's best elite for the task (all sigmas equal before any trial).
intact_best = int(np.argmax(expected))
assert trials[0]["elite"] == intact_best, (trials[0], intact_best)
chosen = result["choice"]["measured"]
assert chosen == max(t["measured"] for t in trials)
# The brute-force reference, computed by numpy, and as reported.
assert abs(result["brute_force"]["best"] - brute_best) < 1e-12, result["brute_force"]
assert result["brute_force"]["cell"] == cells[int(np.argmax(brute))]
assert abs(result["brute_force"]["gap"] - (brute_best - chosen)) < 1e-12
print(f"arm, joint {STUCK_JOINT} stuck at {STUCK_ANGLE} rad: {len(trials)} trials; intact best "
      f"{trials[0]['measured']:.4f} -> adapted {chosen:.4f}; brute-force best {brute_best:.4f} "
      f"(gap {brute_best - chosen:.4f}); stop: {result['stop_reason']}")
assert trials[0]["measured"] <= -0.1, "the damage should matter for the intact best elite"
assert chosen >= brute_best - TOLERANCE, "the adapted choice is not within the stated tolerance"
# The stop rule, recomputed: the map's best expectation less 1% of its span of expectations.
level = expected.max() - 0.01 * (expected.max() - expected.min())
assert abs(result["stop_level"] - level) < 1e-12
assert abs(result["expected_best"] - expected.max()) < 1e-12
for i in range(len(trials) - 1):  # no trial before the last met the rule
    assert max(t["measured"] for t in trials[: i + 1]) < level
assert chosen >= level or len(trials) == 20, "stopped before the rule was met"

# --good-enough: stops at the first trial that reaches the level (the same sequence up to there).
good = -0.1
first = next(i for i, t in enumerate(trials) if t["measured"] >= good)
quick = json.loads(run("adapt", archive, "--on", damage_file, "--format", "json",
                       "--good-enough", good).stdout)
assert [t["cell"] for t in quick["trials"]] == [t["cell"] for t in trials[: first + 1]], quick
assert "good-enough level -0.1" in quick["stop_reason"] and quick["brute_force"] is None

# The trial log, read back with h5py.
with h5py.File(log, "r") as f:
    assert f.attrs["format"] == "tessera-trial-log" and f.attrs["format_version"] == 2
    g = f["trials"]
    assert g["measured"].shape == (len(trials),)
    np.testing.assert_array_equal(g["measured"][()], [t["measured"] for t in trials])
    np.testing.assert_array_equal(g["cell"][()], [t["cell"] for t in trials])
    np.testing.assert_array_equal(g["genome"][()], genomes[[t["elite"] for t in trials]])
    assert g["measured_descriptor"].shape == (len(trials), 2)
    assert g.attrs["chosen"] == result["choice"]["trial"] - 1
    assert abs(g.attrs["length_scale"] - 0.4) < 1e-15 and abs(g.attrs["kappa"] - 0.05) < 1e-15
    assert g.attrs["stop_gap"] == 0.01 and np.isnan(g.attrs["good_enough"])
    assert abs(g.attrs["brute_force_best"] - brute_best) < 1e-12

# Text output: one line per trial, the choice and the hardware caution.
text = run("adapt", archive, "--on", damage_file, "--brute-force").stdout
assert "choice: trial" in text and "validate it in simulation first" in text, text
assert f"trials used: {len(trials)} of 20" in text and "brute force: the best elite" in text, text
assert "below the map's best expectation" in text, text
assert "emergency stop" in text and "safety rules" in text

# --- trials from a process speaking the evaluator line protocol (a robot harness stand-in) ----
worker = (f"/usr/bin/python3 {SOURCE}/tests/reference/arm_damaged_worker.py {STUCK_JOINT} "
          f"{STUCK_ANGLE} {TARGET[0]} {TARGET[1]}")
proc = run("adapt", archive, "--on", damage_file, "--format", "json", "--trial-process", worker)
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
proc = run("adapt", archive, "--on", damage_file, "--ask", "--format", "json",
           input="-0.9\nnot a number\n-0.95\nstop\n")
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
refused("adapt", archive, "--on", damage_file, "--stop-gap", 1.5, expect="--stop-gap")
refused("adapt", archive, "--ask", "--brute-force", expect="--brute-force")
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
