#!/usr/bin/env bash
# ctest-labels: plugins
# ctest-timeout: 900
# Out-of-tree plugins: install this build into a temporary prefix, build the example
# plugin problems/examples/plugin-example against it with find_package(Tessera) and
# tessera_add_plugin(), then check that the installed tessera lists it (and the installed shipped
# plugins), and runs a small illumination with it whose elites a numpy recomputation confirms.
set -eu
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
prefix=$work/prefix
example=$TESSERA_SOURCE_DIR/problems/examples/plugin-example

cmake --install "$TESSERA_BINARY_DIR" --prefix "$prefix" >"$work/install.log"
test -f "$prefix/include/tessera/plugin.h"
cmake -S "$example" -B "$work/build" -DCMAKE_PREFIX_PATH="$prefix" -DCMAKE_BUILD_TYPE=Release \
  >"$work/configure.log" || { cat "$work/configure.log"; exit 1; }
cmake --build "$work/build" >"$work/build.log" 2>&1 || { cat "$work/build.log"; exit 1; }
plugin=$work/build/tessera-plugin-cantilever.so
test -f "$plugin"

# Only the example's folder on the path: the shipped plugins must come from the install prefix.
export TESSERA_PLUGIN_PATH=$work/build
tessera=$prefix/bin/tessera
"$tessera" problems --format json >"$work/problems.json"
"$tessera" problems cantilever
/usr/bin/python3 - "$work/problems.json" "$plugin" "$prefix" <<'PY'
import json, os, sys
listing = json.load(open(sys.argv[1]))
plugin, prefix = sys.argv[2], os.path.realpath(sys.argv[3])
by_name = {p["name"]: p for p in listing["problems"]}
c = by_name.get("cantilever")
assert c is not None, "cantilever not listed: %s" % sorted(by_name)
assert os.path.samefile(c["plugin"], plugin), c["plugin"]
assert c["abi_version"] == 2 and c["genome_size"] == 3, c
assert c["descriptor_names"] == ["reach_m", "log10_deflection_m"], c
for name in ("arm", "sphere-proj", "rastrigin-proj"):
    assert name in by_name, "%s not found in the install prefix" % name
    assert os.path.realpath(by_name[name]["plugin"]).startswith(prefix + "/"), by_name[name]
refused = {r["name"] for r in listing["refused"]}
assert not refused & {"cantilever", "arm", "sphere-proj", "rastrigin-proj"}, listing["refused"]
print("listed:", sorted(by_name))
PY

# A tiny illumination with the example, when this tessera has the command.
if "$tessera" illuminate --help >/dev/null 2>&1; then
  "$tessera" illuminate "$example/cantilever.toml" --out "$work/run" --evaluations 2048 --quiet \
    --set search.batch=128
  /usr/bin/python3 - "$work/run/archive.h5" <<'PY'
import sys
import h5py
import numpy as np
with h5py.File(sys.argv[1], "r") as f:
    assert f.attrs["problem"] in ("cantilever", b"cantilever"), f.attrs["problem"]
    g = f["elites/genome"][...]
    fit = f["elites/fitness"][...]
    d = f["elites/descriptor"][...]
assert len(fit) > 20, len(fit)
# Recompute with the handbook formulas of the example (Roark): mass, reach, log10 deflection.
b, h, L = g[:, 0], g[:, 1], g[:, 2]
assert np.allclose(fit, -7850.0 * b * h * L, rtol=1e-12), "fitness"
assert np.allclose(d[:, 0], L, rtol=1e-12), "reach"
deflection = 1000.0 * L**3 / (3 * 200e9 * b * h**3 / 12)
assert np.allclose(d[:, 1], np.log10(deflection), rtol=1e-12, atol=1e-12), "deflection"
stress = 6 * 1000.0 * L / (b * h**2)
assert np.all(stress <= 250e6), "an infeasible beam was kept"
print("elites:", len(fit))
PY
else
  echo "tessera illuminate not available: listing checked only"
fi
echo ok
