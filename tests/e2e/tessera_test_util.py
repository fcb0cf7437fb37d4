"""Helpers shared by the end-to-end tests: run the real tessera executable on real files."""
import os
import signal
import subprocess
import sys
import tempfile
import time

TESSERA = os.environ.get("TESSERA", "tessera")
SOURCE = os.environ.get("TESSERA_SOURCE_DIR", os.path.abspath(os.path.join(os.path.dirname(__file__), "..", "..")))


def run(*args, check=True, **kw):
    """Runs tessera with args; returns the CompletedProcess (text mode)."""
    proc = subprocess.run([TESSERA, *map(str, args)], capture_output=True, text=True, **kw)
    if check and proc.returncode != 0:
        sys.stderr.write(proc.stdout + proc.stderr)
        raise AssertionError(f"tessera {' '.join(map(str, args))} exited {proc.returncode}")
    return proc


def problem(name):
    return os.path.join(SOURCE, "problems", name)


def tempdir():
    return tempfile.mkdtemp(prefix="tessera-test-")


def read_archive(path):
    """Every dataset and attribute of an archive as numpy arrays / python values (h5py)."""
    import h5py
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset):
                out[name] = obj[()]
        f.visititems(visit)
        for key, value in f.attrs.items():
            out["@" + key] = value
        for group in ("space", "history"):
            for key, value in f[group].attrs.items():
                out[f"{group}@{key}"] = value
    return out


def assert_same_run(a, b, skip_attrs=("@tool_version",)):
    """Elites, history and space bit-identical between two archives read by read_archive."""
    import numpy as np
    keys = sorted(k for k in set(a) | set(b) if k not in skip_attrs)
    for key in keys:
        assert key in a and key in b, f"{key} missing in one archive"
        va, vb = a[key], b[key]
        if isinstance(va, np.ndarray):
            assert va.shape == vb.shape, f"{key}: shapes {va.shape} vs {vb.shape}"
            assert va.dtype == vb.dtype, f"{key}: dtypes differ"
            if va.dtype == object:  # variable-length strings: compare the values
                assert va.tolist() == vb.tolist(), f"{key}: values differ"
            else:  # bit-identical: compare the raw bytes, not approximately
                assert va.tobytes() == vb.tobytes(), f"{key}: values differ"
        else:
            assert va == vb, f"{key}: {va!r} vs {vb!r}"


def run_expecting(*args, expect=0):
    """Runs tessera with args and stops the test at once unless it exits with `expect`."""
    proc = subprocess.run([TESSERA, *map(str, args)], capture_output=True, text=True)
    if proc.returncode != expect:
        raise SystemExit("tessera %s: exit %d (expected %d)\n%s" % (
            " ".join(map(str, args)), proc.returncode, expect, proc.stderr))
    return proc


class Checks:
    """Collects failed checks so that one run of a reference test reports all of them."""

    def __init__(self):
        self.failures = []

    def __call__(self, condition, message):
        if not condition:
            self.failures.append(message)

    def finish(self, what):
        """Exits 1 listing the failures (the first 40), else says that `what` passed."""
        if self.failures:
            print("\n".join(self.failures[:40]))
            print("%d failures" % len(self.failures))
            sys.exit(1)
        print("%s: all checks passed" % what)


def point_arena_layout_at_shipped(path):
    """Format 1 arena fixtures name their layout by the absolute path of the machine that made
    them: point the stored run file at the shipped problems/arenas/open.txt (h5py, in place)."""
    import h5py
    with h5py.File(path, "r+") as f:
        config = f.attrs["config"]
        start = config.index("layout = '") + len("layout = '")
        end = config.index("'", start)
        layout = os.path.join(SOURCE, "problems", "arenas", "open.txt")
        f.attrs["config"] = config[:start] + layout + config[end:]


# Processes seen through Linux /proc, for the interruption tests.
def catches_sigint(pid):
    """True once the process has installed its SIGINT handler (SigCgt in /proc/PID/status)."""
    try:
        with open(f"/proc/{pid}/status") as status:
            caught = int(next(l for l in status if l.startswith("SigCgt:")).split()[1], 16)
        return bool(caught & (1 << (signal.SIGINT - 1)))
    except OSError:
        return False


def wait_for_handler(proc, seconds=60):
    """Waits until `proc` catches SIGINT (or ends): an interruption moment counts from there."""
    deadline = time.time() + seconds
    while time.time() < deadline and proc.poll() is None and not catches_sigint(proc.pid):
        time.sleep(0.002)


def children(pid):
    """The child processes of `pid` (/proc/PID/task/TID/children); none once it is gone."""
    kids = []
    try:
        for tid in os.listdir(f"/proc/{pid}/task"):
            with open(f"/proc/{pid}/task/{tid}/children") as f:
                kids += [int(k) for k in f.read().split()]
    except OSError:
        pass
    return kids


def alive(pid):
    """True while the process exists and is not a zombie."""
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().split(")")[-1].split()[0] != "Z"
    except OSError:
        return False


def write_long_study(path, settings):
    """A study of one arm run far longer than any test (`settings`: its `set` table, TOML)."""
    with open(path, "w") as f:
        f.write(f"""[study]
name = "long"
replicates = 1

[[treatment]]
label = "arm"
run = "{os.path.join(SOURCE, "problems", "arm.toml")}"
set = {{ search.evaluations = 1000000000, {settings} }}

[[measure]]
kind = "final"
figures = ["coverage"]
""")
