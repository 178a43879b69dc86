#!/usr/bin/env bash
# `backcomb calibrate` through the command line, serial and on two ranks:
# data made by `solve` of the tiny calibration case at two gaps (the truth
# is the case's electron mobility, 1 cm^2/Vs), a fit of that mobility from
# 3, the same fitted value under `mpirun -np 2` (the solves of each
# evaluation shared by the ranks) to the Newton tolerance, the files, and
# a run again that only replays.
#   calibrate_cli.sh BINARY CASE
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"
binary=$1
case_file=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"
launcher=$(command -v mpirun || command -v mpiexec || true)
[[ -n $launcher ]] || { echo "no mpirun: skipped"; exit 77; }
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1

data=()
for gap in 2 6; do
  expect_exit 0 "$binary" solve "$case_file" --set "Geometry/Gap=$gap" --out "truth-$gap" --quiet
  {
    echo "kind = light J-V"
    echo "columns = mV, mA/cm2"
    echo "current sign = generated negative"
    echo "device = Geometry/Gap=$gap"
    echo "data"
    # The scan's points at 0, 0.1, ..., 1.1 V, written in mV in the load convention.
    awk -F, 'NR > 2 && $2 != "" { v = $1 + 0; k = v * 10; if (v <= 1.1001 && (k - int(k + 0.5))^2 < 1e-12) printf "%.1f %.12g\n", 1000 * v, -$2 }' \
      "truth-$gap/jv.csv"
  } >"light-$gap.dat"
  data+=(--data "light-$gap.dat")
done
fit=(--fit "Absorber/Transport/Electron mobility=0.1:10" --set "Absorber/Transport/Electron mobility=3")

expect_exit 0 "$binary" calibrate "$case_file" "${data[@]}" "${fit[@]}" --out serial
grep -q "^\[.*\] iteration 1: cost" out.log || fail "no progress line per iteration"
for f in fit.json fitted.prm fit-points.csv fit-1.svg fit-1.png fit-2.png evaluations.jsonl; do
  [[ -s serial/$f ]] || fail "serial/$f missing"
done
[[ ! -e serial/scratch-rank0 ]] || fail "scratch folder left behind"
expect_exit 0 "$launcher" -np 2 --oversubscribe "$binary" calibrate "$case_file" "${data[@]}" "${fit[@]}" --out parallel --quiet
python3 - serial/fit.json parallel/fit.json <<'PY' || fail "fitted values"
import json, sys
s, p = (json.load(open(f)) for f in sys.argv[1:3])
a, b = s["entries"][0]["value"], p["entries"][0]["value"]
print(f"electron mobility: serial {a:.10f}, 2 ranks {b:.10f}, truth 1; solves {s['solves']} and {p['solves']}")
assert s["status"] == p["status"] == "converged"
assert abs(a - 1) < 1e-4 and abs(b - a) < 1e-6
PY
# The fitted case solves.
expect_exit 0 "$binary" solve serial/fitted.prm --set "Geometry/Gap=2" --out refit --quiet
# Run again: every evaluation replayed, none solved.
expect_exit 0 "$binary" calibrate "$case_file" "${data[@]}" "${fit[@]}" --out serial --quiet
python3 -c "import json,sys; j=json.load(open('serial/fit.json')); sys.exit(0 if j['solves'] == 0 else 1)" ||
  fail "a rerun solved again"
echo "calibrate_cli: 1 passed, 0 failed"
