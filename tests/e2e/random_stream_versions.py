# ctest-labels: archive
# ctest-timeout: 300
"""Random stream versions (README "Reproducibility", docs/archive-format.md "random_streams"):
new runs record version 2 and are bit-identical for any thread count; an archive without the
attribute (version 1, the polar method) resumes exactly as the last tessera before versioned
streams resumed it (its output is kept in tests/fixtures/archives, made by that tessera); an
archive naming a version this tessera does not draw is refused in one line. Archives are read
with h5py (Debian python3-h5py)."""
import json
import os
import shutil

import h5py
import numpy as np
from tessera_test_util import (SOURCE, assert_same_run, point_arena_layout_at_shipped, problem,
                               read_archive, run, tempdir)

work = tempdir()
fixtures = os.path.join(SOURCE, "tests", "fixtures", "archives")

# A new run records version 2 and gives the same archive on 1 and 3 threads.
runs = {}
for threads in (1, 3):
    out = os.path.join(work, f"new{threads}")
    run("illuminate", problem("arm.toml"), "--out", out, "--evaluations", 3000, "--set",
        "search.batch=200", "--threads", threads, "--quiet")
    runs[threads] = read_archive(os.path.join(out, "archive.h5"))
assert int(runs[1]["@random_streams"]) == 2, "a new run draws with stream version 2"
assert_same_run(runs[1], runs[3])

# Version 1 archives resume as before: everything bit-identical to the stored resumed copies,
# except the arm's descriptors, whose sine and cosine now come from the batch kernel (libmvec):
# they may differ in the last bits, never by more than 1e-15 (the arm's reach is 1).
cases = {"format1-arm-grid.h5": ("format1-arm-grid-resumed.h5", 300),
         "format1-arena-novelty.h5": ("format1-arena-novelty-resumed.h5", 200)}
for name, (reference, budget) in cases.items():
    for threads in (1, 2):
        copy = os.path.join(work, f"{threads}-{name}")
        shutil.copy(os.path.join(fixtures, name), copy)
        if "arena" in name:  # its stored run file names the layout by an absolute path
            point_arena_layout_at_shipped(copy)
        run("resume", copy, "-n", budget, "--threads", threads, "--quiet")
        got = read_archive(copy)
        want = read_archive(os.path.join(fixtures, reference))
        assert int(got.pop("@random_streams")) == 1, f"{name}: keeps stream version 1"
        for key in ("@config", "@tool_version"):
            got.pop(key), want.pop(key)
        if "arm" in name:
            for key in [k for k in got if k.endswith("descriptor")]:
                a, b = got.pop(key), want.pop(key)
                assert a.shape == b.shape, f"{name}: {key} shape"
                assert np.max(np.abs(a - b), initial=0.0) <= 1e-15, f"{name}: {key} moved"
        assert_same_run(got, want, skip_attrs=())

# A version this tessera does not draw: refused in one line by resume; still readable.
copy = os.path.join(work, "future.h5")
shutil.copy(os.path.join(fixtures, "format1-arm-grid.h5"), copy)
with h5py.File(copy, "r+") as f:
    f.attrs["random_streams"] = np.int64(3)
before = open(copy, "rb").read()
p = run("resume", copy, "-n", 300, "--quiet", check=False)
lines = p.stderr.strip().splitlines()
assert p.returncode != 0, "an unknown stream version is refused"
assert len(lines) == 1 and "random streams are version 3" in lines[0] and "future.h5" in lines[0], \
    p.stderr
assert open(copy, "rb").read() == before, "the refused archive is left as it was"
run("inspect", copy)

# inspect says which version an archive drew with, as h5py reads the attribute.
for path in (os.path.join(work, "new1", "archive.h5"), os.path.join(work, "1-format1-arm-grid.h5"),
             copy):
    with h5py.File(path, "r") as f:
        want = int(f.attrs["random_streams"]) if "random_streams" in f.attrs else 1
    shown = json.loads(run("inspect", path, "--format", "json").stdout)["random_streams"]
    assert shown == want, (path, shown, want)
    assert f"random streams version {want}" in run("inspect", path).stdout, path
print("ok")
