"""Helpers shared by the end-to-end tests: run the real tessera executable on real files."""
import os
import subprocess
import sys
import tempfile

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
