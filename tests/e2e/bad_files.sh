# Every bad-file case given to `tessera inspect` and `tessera resume`: exit code 2,
# exactly one line on stderr naming the file and the fault, nothing on stdout from inspect, and
# no file created or changed in the folder. Damaged archives are made with h5py (Debian
# python3-h5py) from a valid archive written by tests/tools/write_sample_archive.
set -u
writer="$TESSERA_BINARY_DIR/tests/tools/write_sample_archive"
dir=$(mktemp -d /tmp/tessera-bad-files-XXXXXX)
trap 'rm -rf "$dir"' EXIT
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }

"$writer" grid "$dir/valid.h5" 50 7 || { echo "cannot write the sample archive"; exit 1; }

mkdir "$dir/folder.h5"
printf 'just some text\n' > "$dir/text.h5"
: > "$dir/empty.h5"
cp "$dir/valid.h5" "$dir/truncated.h5"
truncate -s $(( $(stat -c %s "$dir/valid.h5") / 2 )) "$dir/truncated.h5"
/usr/bin/python3 - "$dir" <<'EOF' || { echo "h5py could not prepare the files"; exit 1; }
import shutil, sys
import h5py, numpy as np
d = sys.argv[1]
with h5py.File(f"{d}/other.h5", "w") as f:          # HDF5, but some other program's file
    f["values"] = np.arange(3.0)
    f.attrs["title"] = "not an archive"
def damaged(name, change):
    shutil.copy(f"{d}/valid.h5", f"{d}/{name}")
    with h5py.File(f"{d}/{name}", "r+") as f:
        change(f)
def newer(f):
    f.attrs["format_version"] = np.int64(3)
def rows(f):
    birth = f["elites/birth"][:-1]
    del f["elites/birth"]
    f["elites/birth"] = birth
def nan_fitness(f):
    fitness = f["elites/fitness"][...]
    fitness[2] = np.nan
    del f["elites/fitness"]
    f["elites/fitness"] = fitness
def inf_bound(f):
    lower = f["genome/lower"][...]
    lower[0] = -np.inf
    del f["genome/lower"]
    f["genome/lower"] = lower
def duplicate(f):
    cell = f["elites/cell"][...]
    cell[9] = cell[3]
    del f["elites/cell"]
    f["elites/cell"] = cell
damaged("newer.h5", newer)
damaged("rows.h5", rows)
damaged("nan.h5", nan_fitness)
damaged("inf.h5", inf_bound)
damaged("duplicate.h5", duplicate)
EOF

state() { (cd "$dir" && find . -printf '%p %y %s %m\n' | sort && find . -type f -exec sha256sum {} + | sort); }
before=$(state)

expect() {  # FILE FAULT
  local file="$1" fault="$2" cmd out err rc lines
  for cmd in inspect resume; do
    out=$(mktemp) err=$(mktemp)
    "$TESSERA" "$cmd" "$file" >"$out" 2>"$err"
    rc=$?
    lines=$(wc -l < "$err")
    [ "$rc" -eq 2 ] || fail "$cmd $file: exit code $rc, expected 2"
    [ "$lines" -eq 1 ] || fail "$cmd $file: $lines lines on stderr, expected 1: $(cat "$err")"
    grep -qF "tessera: $file: " "$err" || fail "$cmd $file: stderr does not name the file: $(cat "$err")"
    grep -qF "$fault" "$err" || fail "$cmd $file: stderr lacks '$fault': $(cat "$err")"
    if [ "$cmd" = inspect ] && [ -s "$out" ]; then fail "inspect $file: wrote to stdout"; fi
    [ "$(state)" = "$before" ] || fail "$cmd $file: the folder changed"
    echo "$cmd: $(cat "$err")"
    rm -f "$out" "$err"
  done
}

expect "$dir/missing.h5" "no such file"
expect "$dir/folder.h5" "is a directory"
expect "$dir/text.h5" "not an HDF5 file"
expect "$dir/empty.h5" "not an HDF5 file"
expect "$dir/other.h5" "not a tessera archive"
expect "$dir/newer.h5" "archive format 3 is newer than this tessera reads (formats 1 to 2)"
expect "$dir/truncated.h5" "truncated or damaged HDF5 file"
expect "$dir/rows.h5" "/elites/birth has 49 rows but /elites/fitness has 50"
expect "$dir/nan.h5" "/elites/fitness[2] is NaN"
expect "$dir/inf.h5" "/genome/lower[0] is -inf"
expect "$dir/duplicate.h5" "is a duplicated cell"

# The valid archive itself is accepted, so the refusals above are about the damage.
"$TESSERA" inspect "$dir/valid.h5" > /dev/null || fail "inspect refused the valid archive"

if [ "$failures" -ne 0 ]; then echo "$failures checks failed"; exit 1; fi
echo "all bad files refused"
