# kill -9 during checkpoint writes: `tessera illuminate` checkpointing after every batch (a
# 300 x 300 grid, so that writing is a large share of the run) is killed with SIGKILL at random
# moments. Each time the archive must read back whole with `tessera inspect` and with h5py, the
# only leftover may be the writer's temporary file, and `tessera resume` must finish the run.
# ctest-labels: slow
# ctest-timeout: 600
set -u
dir=$(mktemp -d /tmp/tessera-kill-XXXXXX)
trap 'rm -rf "$dir"' EXIT
failures=0
fail() { echo "FAIL: $*"; failures=$((failures + 1)); }
budget=200000

for round in 1 2 3; do
  out="$dir/run$round"
  "$TESSERA" illuminate "$TESSERA_SOURCE_DIR/problems/arm.toml" --out "$out" --quiet --threads 2 \
    --evaluations "$budget" --set checkpoint.every_evaluations=1024 \
    --set "space.resolution=[300,300]" > "$dir/log$round" 2>&1 &
  pid=$!
  # Wait for the first checkpoint, then a random further 0.2 .. 3 s.
  for _ in $(seq 1 300); do [ -e "$out/archive.h5" ] && break; sleep 0.05; done
  sleep "$(( RANDOM % 28 / 10 )).$(( RANDOM % 10 ))"
  kill -9 "$pid"
  wait "$pid" 2>/dev/null
  status=$?
  [ "$status" -eq 137 ] || { echo "round $round: the run ended by itself ($status); no kill"; continue; }

  archive="$out/archive.h5"
  [ -e "$archive" ] || { fail "round $round: no archive after the first checkpoint"; continue; }
  json=$("$TESSERA" inspect --format json "$archive" 2>&1) || fail "round $round: inspect: $json"
  /usr/bin/python3 - "$archive" <<'EOF' || fail "round $round: h5py could not read the archive"
import sys, h5py
with h5py.File(sys.argv[1], "r") as f:
    n = f["elites/fitness"].shape[0]
    assert f["elites/genome"][...].shape[0] == n and n > 0
    assert f.attrs["format"] == "tessera-archive"
EOF
  for leftover in "$out"/.??*; do
    [ -e "$leftover" ] || continue
    case "$(basename "$leftover")" in
      .archive.h5.tmp-*) echo "round $round: left $(basename "$leftover") (from the killed write)" ;;
      *) fail "round $round: unexpected file $leftover" ;;
    esac
  done
  evaluations=$(printf '%s' "$json" | /usr/bin/python3 -c 'import json,sys; print(json.load(sys.stdin)["evaluations"])')
  echo "round $round: archive intact at $evaluations evaluations"

  if [ "$round" -eq 1 ]; then
    "$TESSERA" resume "$archive" --quiet --threads 2 > "$dir/resume.log" 2>&1 ||
      fail "resume after kill -9 failed: $(cat "$dir/resume.log")"
    final=$("$TESSERA" inspect --format json "$archive" |
            /usr/bin/python3 -c 'import json,sys; print(json.load(sys.stdin)["evaluations"])')
    [ "$final" -eq "$budget" ] || fail "resumed run ended at $final evaluations, not $budget"
    # The resumed run's writes remove the killed writer's temporary file.
    for leftover in "$out"/.??*; do
      [ -e "$leftover" ] && fail "still there after resume: $(basename "$leftover")"
    done
  fi
done

if [ "$failures" -ne 0 ]; then echo "$failures checks failed"; exit 1; fi
echo "every killed run left a readable archive"
