#!/usr/bin/env bash
# ctest-labels: plugins
# `tessera problems` lists every shipped problem with its plugin file and ABI version, and lists
# the faulty fixture plugins (tests/fixtures/bad_plugins) as refused, each with its reason; an
# unknown name is one line on stderr, exit code 2.
set -eu
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
bad=$TESSERA_BINARY_DIR/tests/fixtures/bad_plugins
export TESSERA_PLUGIN_PATH=$bad:$TESSERA_PLUGIN_PATH

"$TESSERA" problems >"$work/text"
"$TESSERA" problems --format json >"$work/json"
/usr/bin/python3 - "$work/json" "$work/text" "$bad" <<'PY'
import json, math, sys
listing = json.load(open(sys.argv[1]))
text = open(sys.argv[2]).read()
bad = sys.argv[3]
by_name = {p["name"]: p for p in listing["problems"]}
# README.md "Shipped problems": sizes, bounds and the QD offset (fitness lower bound).
expect = {
    "arm": (10, -math.pi, math.pi, ["x", "y"], 1.0, -math.pi ** 2, 0.0),
    "sphere-proj": (100, -5.12, 5.12, None, 256.0, 0.0, 100.0),
    "rastrigin-proj": (100, -5.12, 5.12, None, 256.0, 0.0, 100.0),
}
for name, (g, lo, hi, names, dbound, flo, fhi) in expect.items():
    p = by_name[name]
    assert p["genome_size"] == g and len(p["genome_lower"]) == g, name
    assert all(v == lo for v in p["genome_lower"]) and all(v == hi for v in p["genome_upper"]), name
    assert p["descriptor_upper"] == [dbound, dbound], name
    assert p["descriptor_lower"] == [-dbound, -dbound], name
    if names:
        assert p["descriptor_names"] == names, name
    assert abs(p["fitness_lower"] - flo) < 1e-12 and p["fitness_upper"] == fhi, name
    assert p["abi_version"] == 2 and p["plugin"].endswith("/tessera-plugin-%s.so" % name), p
    assert p["plugin"] in text and name + "\n" in text, name
# What each plugin exports (nm would show the same): arm, arena and linkage draw a scene and trace
# elites; the projection benchmarks export neither, and say so.
for name in ("arm", "arena", "linkage"):
    assert by_name[name]["draws_scene"] and by_name[name]["gives_traces"], name
assert not by_name["sphere-proj"]["draws_scene"] and not by_name["sphere-proj"]["gives_traces"]
assert "figures     draws its scene and traces elites" in text
assert "figures     none (report shows the map and curves only)" in text
refused = {r["path"]: r["reason"] for r in listing["refused"]}
faults = {"bad-abi": "ABI version 42", "bad-missing": "missing symbol(s) tsr_evaluate",
          "bad-bounds": "lower >= upper", "bad-null-names": "descriptor names are missing"}
for name, reason in faults.items():
    path = "%s/tessera-plugin-%s.so" % (bad, name)
    assert reason in refused.get(path, ""), (name, refused)
    assert "%s: " % path in text, name
assert "bad-runtime" in by_name  # valid metadata: listed, though it fails at run time
print("problems:", sorted(by_name), "refused:", len(refused))
PY

set +e
"$TESSERA" problems no-such-problem >"$work/out" 2>"$work/err"
rc=$?
set -e
test "$rc" -eq 2
test "$(wc -l <"$work/err")" -eq 1
grep -q "no problem named 'no-such-problem'; available: .*arm" "$work/err"
echo ok
