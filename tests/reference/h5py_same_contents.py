"""Reference for archive storage: h5py (Debian python3-h5py, on the HDF5 reference library)
reads two archive files, each through its own stored filters, and checks that they hold the same
groups, datasets (same dtype, shape and bytes) and attributes. Exits 0 when they do; otherwise
prints the first difference and exits 1. Usage: h5py_same_contents.py A.h5 B.h5"""
import sys

import h5py
import numpy as np


def contents(path):
    found = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            attrs = {k: obj.attrs[k] for k in obj.attrs}
            if isinstance(obj, h5py.Dataset):
                data = obj[()]
                found[name] = (str(obj.dtype), obj.shape,
                               data.tobytes() if isinstance(data, np.ndarray) and
                               data.dtype.kind in "fiu" else repr(data), repr(attrs))
            else:
                found[name] = ("group", None, None, repr(attrs))
        visit("/", f)
        f.visititems(visit)
    return found


a, b = contents(sys.argv[1]), contents(sys.argv[2])
if a.keys() != b.keys():
    print("different members:", sorted(set(a) ^ set(b)))
    sys.exit(1)
for name in sorted(a):
    if a[name] != b[name]:
        print("differs:", name)
        sys.exit(1)
print(f"same contents: {len(a)} members")
