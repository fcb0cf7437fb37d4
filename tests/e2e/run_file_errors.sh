#!/usr/bin/env bash
# ctest-labels: engine
# A run file with an unknown key, a wrong type or an impossible value is refused with the file,
# the line and the key named, in one line, exit code 2, and no output folder is created.
set -u
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
# shellcheck source=refusal_util.sh
source "$(dirname "$0")/refusal_util.sh"

expect_refusal() {  # NAME EXPECTED-SUBSTRING  (run file on stdin)
  local name=$1 expected=$2 file="$work/$1.toml"
  cat > "$file"
  check_refusal illuminate "$file" "$name" "$expected"
}

expect_refusal unknown-key ":6: key 'search.batchsize': unknown key" <<'T'
[problem]
name = "arm"
[space]
resolution = [10, 10]
[search]
batchsize = 12
T
expect_refusal wrong-type ":5: key 'search.batch': must be an integer" <<'T'
[problem]
name = "arm"
[search]
evaluations = 1000
batch = "many"
[space]
resolution = 10
T
expect_refusal zero-cells ":4: key 'space.resolution': zero cells" <<'T'
[problem]
name = "arm"
[space]
resolution = [10, 0]
T
expect_refusal batch-zero ":6: key 'search.batch': must be at least 1" <<'T'
[problem]
name = "arm"
[space]
resolution = 10
[search]
batch = 0
T
expect_refusal process-bounds "lower >= upper" <<'T'
[problem]
kind = "process"
name = "p"
command = ["/bin/cat"]
genome_lower = [0.0, 1.0]
genome_upper = [1.0, 1.0]
descriptor_lower = [0.0]
descriptor_upper = [1.0]
descriptor_names = ["d"]
fitness_lower = 0.0
fitness_upper = 1.0
[space]
resolution = 10
T
expect_refusal syntax ":3:" <<'T'
[problem]
name = "arm"
resolution = = 3
T
expect_refusal unknown-problem "no-such-problem" <<'T'
[problem]
name = "no-such-problem"
[space]
resolution = 10
T
expect_refusal bad-option "joints" <<'T'
[problem]
name = "arm"
[problem.options]
joints = -3
[space]
resolution = 10
T
expect_refusal wrong-dimensions "space.resolution" <<'T'
[problem]
name = "arm"
[space]
resolution = [10, 10, 10]
T

# --set is checked the same way.
"$TESSERA" illuminate "$TESSERA_SOURCE_DIR/problems/arm.toml" --out "$work/set" --set search.batch=0 \
  --quiet 2>"$work/stderr"
rc=$?
if [ $rc -ne 2 ] || ! grep -q "search.batch" "$work/stderr"; then
  echo "FAIL --set: rc=$rc $(cat "$work/stderr")"; fail=1
else
  echo "ok   --set: $(cat "$work/stderr")"
fi
exit $fail
