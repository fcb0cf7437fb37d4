# Shared by the shell tests of refused input files (sourced, not run). Needs $work and $fail.
# check_refusal COMMAND FILE NAME EXPECTED-SUBSTRING: `tessera COMMAND FILE` must exit 2 with one
# line on stderr that holds EXPECTED-SUBSTRING and the file's path, and create no output folder.
check_refusal() {
  local command=$1 file=$2 name=$3 expected=$4
  "$TESSERA" "$command" "$file" --out "$work/out-$name" --quiet >"$work/stdout" 2>"$work/stderr"
  local rc=$?
  local lines
  lines=$(wc -l < "$work/stderr")
  if [ "$rc" -ne 2 ] || [ "$lines" -ne 1 ] || ! grep -qF -- "$expected" "$work/stderr" \
     || ! grep -qF "$file" "$work/stderr" || [ -e "$work/out-$name" ]; then
    echo "FAIL $name: rc=$rc lines=$lines stderr: $(cat "$work/stderr")"
    fail=1
  else
    echo "ok   $name: $(cat "$work/stderr")"
  fi
}
