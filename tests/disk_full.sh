#!/usr/bin/env bash
# A full disk, simulated: tests/enospc_shim.c (LD_PRELOAD) makes writes to
# one chosen file fail with ENOSPC part-way through. The program must stop
# with the I/O exit code 4 and a message naming that file, and the earlier
# complete version of the file must survive unchanged.
#   disk_full.sh BINARY SHIM CASE
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"
binary=$1
shim=$2
case_file=$3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

# Runs the program with ENOSPC on files whose path contains $1, after $2 bytes.
full_disk() {
  local match=$1 after=$2
  shift 2
  LD_PRELOAD=$shim BACKCOMB_ENOSPC_MATCH=$match BACKCOMB_ENOSPC_AFTER=$after "$@"
}

# A complete solve, then the same folder with another generation rate (so
# that every result changes) and the disk full in the middle of jv.csv.
expect_exit 0 "$binary" solve "$case_file" --out res --quiet
cp res/jv.csv jv.before
expect_exit 4 full_disk /res/jv.csv 100 "$binary" solve "$case_file" \
  --set "Illumination/Uniform generation rate=5e20" --out res --quiet
grep -q "output error: cannot write 'res/jv.csv' (No space left on device)" out.log ||
  { cat out.log; fail "the message does not name res/jv.csv and the cause"; }
cmp -s jv.before res/jv.csv || fail "the earlier complete jv.csv was changed"
ls res | grep -q '\.tmp' && fail "a temporary file was left: $(ls res)"
# The interrupted run has no summary: summary.json marks a finished run.
[[ ! -e res/summary.json ]] || fail "summary.json next to results of another run"
# With space again the run finishes, from its checkpoint.
expect_exit 0 "$binary" solve "$case_file" --set "Illumination/Uniform generation rate=5e20" --out res
grep -q "resumed from [0-9]* points" out.log || fail "the rerun did not resume"

# The disk full on summary.json: exit 4, the file named, jv.csv complete.
expect_exit 4 full_disk /res/summary.json 0 "$binary" solve "$case_file" --out res --quiet
grep -q "cannot write 'res/summary.json'" out.log || { cat out.log; fail "summary.json not named"; }
tail -c 1 res/jv.csv | od -c | grep -q '\\n' || fail "jv.csv is truncated"

# A sweep whose table cannot be written: exit 4, sweep.csv named, the
# table of the earlier complete run unchanged.
vary=(--vary "Geometry/Strip length=0.5,1")
expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" --out sw --quiet
cp sw/sweep.csv sweep.before
rm -rf sw/cases/Strip_length=1
expect_exit 4 full_disk /sw/sweep.csv 50 "$binary" sweep "$case_file" "${vary[@]}" --out sw --quiet
grep -q "cannot write 'sw/sweep.csv' (No space left on device)" out.log || { cat out.log; fail "sweep.csv not named"; }
cmp -s sweep.before sw/sweep.csv || fail "the earlier complete sweep.csv was changed"
echo "disk_full: 3 passed, 0 failed"
