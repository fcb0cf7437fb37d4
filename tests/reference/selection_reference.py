"""Reference answers for the selection commands, computed independently of Tessera.

Archives are read with h5py (Debian python3-h5py), nearest neighbours come from an exhaustive
numpy search and from scipy.spatial.cKDTree (Debian python3-scipy), dominance from its definition
(at least as good on every objective and strictly better on one; common practice). PNG files are
decoded here from the PNG specification (ISO/IEC 15948) with the standard library's zlib.
"""
import struct
import zlib

import h5py
import numpy as np


def load_archive(path):
    with h5py.File(path, "r") as f:
        names = [n.decode() if isinstance(n, bytes) else str(n) for n in f["space/names"][()]]
        out = {
            "kind": f["space"].attrs["kind"],
            "lower": f["space/lower"][()],
            "upper": f["space/upper"][()],
            "names": names,
            "cell": f["elites/cell"][()],
            "genome": f["elites/genome"][()],
            "descriptor": f["elites/descriptor"][()],
            "fitness": f["elites/fitness"][()],
        }
        if "centroids" in f["space"]:
            out["centroids"] = f["space/centroids"][()]
        if "resolution" in f["space"]:
            out["resolution"] = f["space/resolution"][()]
    if isinstance(out["kind"], bytes):
        out["kind"] = out["kind"].decode()
    return out


def scaled(archive, values):
    return (np.asarray(values, dtype=float) - archive["lower"]) / (archive["upper"] - archive["lower"])


def constraint_mask(archive, min_fitness=None, within=()):
    """within: (name, lo, hi) triples."""
    mask = np.ones(len(archive["fitness"]), dtype=bool)
    if min_fitness is not None:
        mask &= archive["fitness"] >= min_fitness
    for name, lo, hi in within:
        column = archive["descriptor"][:, archive["names"].index(name)]
        mask &= (column >= lo) & (column <= hi)
    return mask


def brute_force_nearest(archive, mask, target, k):
    """(rows, distances) of the k nearest feasible elites, exhaustive, ties by row."""
    rows = np.flatnonzero(mask)
    diff = scaled(archive, archive["descriptor"][rows]) - scaled(archive, target)
    dist = np.sqrt((diff * diff).sum(axis=1))
    order = np.lexsort((rows, dist))[:k]
    return rows[order], dist[order]


def non_dominated(values, maximize):
    """Rows of `values` (n x m) that no other row dominates; O(n^2) from the definition."""
    v = np.where(np.asarray(maximize), values, -values)
    keep = []
    for b in range(len(v)):
        no_worse = (v >= v[b]).all(axis=1)
        better = (v > v[b]).any(axis=1)
        if not (no_worse & better).any():
            keep.append(b)
    return keep


def read_png(path):
    """(width, height, pixels as uint8 array [h, w, channels]) of an 8-bit RGB/RGBA PNG."""
    data = open(path, "rb").read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG file"
    at, idat, header = 8, b"", None
    while at < len(data):
        length, ctype = struct.unpack(">I4s", data[at:at + 8])
        body = data[at + 8:at + 8 + length]
        crc = struct.unpack(">I", data[at + 8 + length:at + 12 + length])[0]
        assert zlib.crc32(ctype + body) == crc, "bad CRC in chunk %r" % ctype
        if ctype == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif ctype == b"IDAT":
            idat += body
        at += 12 + length
    width, height, depth, colour, _, _, interlace = header
    assert depth == 8 and colour in (2, 6) and interlace == 0, "unsupported PNG %r" % (header,)
    bpp = 3 if colour == 2 else 4
    raw = zlib.decompress(idat)
    stride = width * bpp
    out = bytearray(height * stride)
    prev = bytearray(stride)
    for y in range(height):
        kind = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        if kind == 1:
            a = np.frombuffer(bytes(line), dtype=np.uint8).reshape(width, bpp).astype(np.int64)
            line = bytearray((np.cumsum(a, axis=0) % 256).astype(np.uint8).tobytes())
        elif kind == 2:
            line = bytearray(((np.frombuffer(bytes(line), np.uint8).astype(np.int64) +
                               np.frombuffer(bytes(prev), np.uint8)) % 256).astype(np.uint8).tobytes())
        elif kind == 3:
            for i in range(stride):
                left = line[i - bpp] if i >= bpp else 0
                line[i] = (line[i] + ((left + prev[i]) >> 1)) & 255
        elif kind == 4:
            for i in range(stride):
                a = line[i - bpp] if i >= bpp else 0
                b = prev[i]
                c = prev[i - bpp] if i >= bpp else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pred) & 255
        else:
            assert kind == 0, "bad filter type %d" % kind
        out[y * stride:(y + 1) * stride] = line
        prev = line
    return width, height, np.frombuffer(bytes(out), dtype=np.uint8).reshape(height, width, bpp)
