#!/usr/bin/env bash
# ctest-labels: studies
# A study file with an unknown key, a missing run file, duplicate labels or zero replicates is
# refused in one line naming the file, the line and the key, exit code 2, and no output folder is
# created; so is a missing study file. The help of study and compare names files that exist and
# says how to read the figures. A run that fails is reported, the other runs go on, and its measures are missing
# (empty in measures.csv), never zero.
set -u
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fail=0
# shellcheck source=refusal_util.sh
source "$(dirname "$0")/refusal_util.sh"
arm="$TESSERA_SOURCE_DIR/problems/arm.toml"

expect_refusal() {  # NAME EXPECTED-SUBSTRING  (study file on stdin)
  local name=$1 expected=$2 file="$work/$1.toml"
  sed "s#ARM#$arm#g" > "$file"
  check_refusal study "$file" "$name" "$expected"
}

expect_refusal unknown-key ":5: key 'treatment[1].lable': unknown key" <<'T'
[study]
replicates = 2
[[treatment]]
label = "a"
lable = "b"
run = "ARM"
T
expect_refusal missing-run-file ":8: key 'treatment[2].run': no such run file" <<'T'
[study]
replicates = 2
[[treatment]]
label = "a"
run = "ARM"
[[treatment]]
label = "b"
run = "no-such-run-file.toml"
T
expect_refusal duplicate-labels ":7: key 'treatment[2].label': duplicate label 'a'" <<'T'
[study]
replicates = 2
[[treatment]]
label = "a"
run = "ARM"
[[treatment]]
label = "a"
run = "ARM"
T
expect_refusal zero-replicates ":2: key 'study.replicates': zero replicates" <<'T'
[study]
replicates = 0
[[treatment]]
label = "a"
run = "ARM"
T
# A count that no machine could run used to be expanded into a list of seeds (bad_alloc).
expect_refusal absurd-replicates ":2: key 'study.replicates': 1000000000000 replicates" <<'T'
[study]
replicates = 1000000000000
[[treatment]]
label = "a"
run = "ARM"
T
expect_refusal empty-seed-list ":2: key 'study.replicates': zero replicates" <<'T'
[study]
replicates = []
[[treatment]]
label = "a"
run = "ARM"
T
expect_refusal bad-override \
  ":6: key 'treatment[1].set.search.batchsize': unknown key (the keys of [search] are" <<'T'
[study]
replicates = 1
[[treatment]]
label = "a"
run = "ARM"
set = { search.batchsize = 3 }
T
expect_refusal unknown-measure ":7: key 'measure[1].kind': unknown measure kind 'speed'" <<'T'
[study]
replicates = 1
[[treatment]]
label = "a"
run = "ARM"
[[measure]]
kind = "speed"
T

# A study file that is not there, or is a folder: one line naming it, as run files get.
for path in "$work/no-such-study.toml" "$work"; do
  "$TESSERA" study "$path" --out "$work/out-none" >"$work/stdout" 2>"$work/stderr"
  rc=$?
  if [ "$rc" -ne 2 ] || [ "$(wc -l < "$work/stderr")" -ne 1 ] \
     || ! grep -qE -- "^tessera: $path: (no such study file|is a folder, not a study file)$" \
       "$work/stderr" || [ -e "$work/out-none" ]; then
    echo "FAIL study file $path: rc=$rc stderr: $(cat "$work/stderr")"; fail=1
  else
    echo "ok   study file: $(cat "$work/stderr")"
  fi
done

# Help: every shipped file it names exists; it says what p_holm and A12 mean and shows examples.
"$TESSERA" study --help >"$work/study-help" 2>&1
"$TESSERA" compare --help >"$work/compare-help" 2>&1
for named in $(grep -ohE 'problems/[A-Za-z0-9_./-]+\.toml' "$work/study-help" "$work/compare-help"); do
  if [ ! -f "$TESSERA_SOURCE_DIR/$named" ]; then
    echo "FAIL help names $named, which is not shipped"; fail=1
  fi
done
for help in study-help compare-help; do
  for phrase in "Examples:" "p_holm" "A12" "0.71" "censored" "missing"; do
    if ! grep -qF -- "$phrase" "$work/$help"; then
      echo "FAIL $help lacks '$phrase'"; fail=1
    fi
  done
done
echo "ok   help checked"

# A treatment whose problem refuses its options fails at run time: reported, the others go on,
# its measures are empty (missing) in measures.csv, and the exit code is 1.
cat > "$work/failing.toml" <<T
[study]
replicates = 2
[[treatment]]
label = "good"
run = "$arm"
set = { search.evaluations = 2000, search.batch = 500 }
[[treatment]]
label = "broken"
run = "$arm"
set = { search.evaluations = 2000, problem.options.joints = -4 }
[[measure]]
kind = "final"
figures = ["coverage", "max_fitness"]
T
"$TESSERA" study "$work/failing.toml" --out "$work/failing" --jobs 2 >"$work/stdout" 2>"$work/stderr"
rc=$?
csv="$work/failing/measures.csv"
good_values=$(grep -c '^good,seed-[12],[a-z_]*,-\?[0-9]' "$csv")
broken_empty=$(grep -c '^broken,seed-[12],[a-z_]*,,0$' "$csv")
if [ "$rc" -ne 1 ] || ! grep -q "broken seed-1: exit code 2" "$work/stderr" \
   || ! grep -q "broken seed-2: exit code 2" "$work/stderr" \
   || [ "$good_values" -ne 4 ] || [ "$broken_empty" -ne 4 ] || grep -q '^broken.*,0,0$' "$csv"; then
  echo "FAIL failing-run: rc=$rc good=$good_values broken_empty=$broken_empty"
  cat "$work/stderr" "$csv"
  fail=1
else
  echo "ok   failing-run: $(grep -m1 'broken seed-1' "$work/stderr")"
fi
# --list numbers the (treatment, replicate) runs; --only INDEX runs that one alone (a job-array
# task) and takes no measures; the study then runs the rest and skips it.
"$TESSERA" study "$work/failing.toml" --out "$work/only" --list >"$work/list" 2>&1
"$TESSERA" study "$work/failing.toml" --out "$work/only" --only 1 --quiet >"$work/stdout" 2>&1
only_rc=$?
runs_done=$(find "$work/only/runs" -name done | wc -l)
if ! grep -q "^1  good seed-2$" "$work/list" || ! grep -q "^3  broken seed-2$" "$work/list" \
   || [ "$only_rc" -ne 0 ] || [ "$runs_done" -ne 1 ] || [ ! -e "$work/only/runs/good/seed-2/done" ] \
   || [ -e "$work/only/measures.csv" ]; then
  echo "FAIL only: rc=$only_rc done=$runs_done"; cat "$work/list" "$work/stdout"; fail=1
else
  echo "ok   only: one run, no measures"
fi
exit $fail
