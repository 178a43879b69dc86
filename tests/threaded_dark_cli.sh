#!/usr/bin/env bash
# The dark J-V in a thread of its own beside the light J-V
# (simulator/case_run.cc, fem/blas_lock.h) against the same solve in one
# thread, on the tiny lit test strip with the dark scan on. The one-thread
# run is the reference: `taskset -c 0` leaves the process one CPU, and the
# solve then runs the dark J-V after the light one, on the same solver.
#   - the threaded run says so in summary.json (newton.dark_in_own_thread);
#   - the light J-V, the metrics and the suns-Voc points are the same bit
#     for bit (the light J-V's solver does the same steps either way);
#   - every dark current agrees to 1e-6 relative plus 1e-8 mA/cm2: both
#     are converged to the Newton tolerance (1e-9 kT/q), and the dark
#     scan's first chord steps start from different factorisations. A
#     current is then known to about 1e-9 of the currents that flow in the
#     film (6.4 mA/cm2 under light here), so near 0 V the dark current
#     (1e-11 mA/cm2 and below, either sign) is that noise; from 0.5 V up
#     the two agree to 1e-7 or better;
#   - five threaded runs give the same dark currents bit for bit: two
#     factorisations at once with a BLAS that is not thread-safe gave
#     Newton runs that changed from one run to the next, and failures.
# Skipped (77) where the process may use only one CPU.
#
#   threaded_dark_cli.sh BINARY TINY_CASE.prm
set -uo pipefail
binary=$1
case_file=$2
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"

cpus=$(nproc)
((cpus >= 2)) || { echo "one CPU: nothing to compare"; exit 77; }
command -v taskset > /dev/null || { echo "no taskset"; exit 77; }

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work" || exit 1

dark=(--set "J-V scan/Dark scan=true" --set "J-V scan/Start voltage=-0.2" --set "J-V scan/Voltage step=0.05")
expect_exit 0 taskset -c 0 "$binary" solve "$case_file" "${dark[@]}" --out one
for k in 1 2 3 4 5; do
  expect_exit 0 "$binary" solve "$case_file" "${dark[@]}" --out "two$k"
done

python3 - one two1 two2 two3 two4 two5 <<'PY' || fail "threaded against one thread"
import csv, json, sys
one, runs = sys.argv[1], sys.argv[2:]

def table(folder):
    rows = [r for r in csv.reader(open(folder + "/jv.csv")) if r and not r[0].startswith("#")]
    head = rows[0]
    return {h: [float(r[i]) if r[i] else None for r in rows[1:]] for i, h in enumerate(head)}

def summary(folder):
    return json.load(open(folder + "/summary.json"))

s1 = summary(one)
assert not s1["newton"]["dark_in_own_thread"], "the one-CPU run used a thread"
t1 = table(one)
dark = [k for k in t1 if "dark" in k][0]
light = [k for k in t1 if "light" in k][0]
first = None
for f in runs:
    s, t = summary(f), table(f)
    assert s["newton"]["dark_in_own_thread"], f + ": the dark J-V did not run in its own thread"
    assert s["status"] == "converged" == s1["status"], (s["status"], s1["status"])
    assert t[light] == t1[light], f + ": light J-V differs"
    assert s["metrics"] == s1["metrics"], f + ": metrics differ"
    assert s["suns_voc"] == s1["suns_voc"], f + ": suns-Voc differs"
    n = 0
    for a, b in zip(t1[dark], t[dark]):
        if a is None and b is None:
            continue
        assert a is not None and b is not None, f + ": a dark point of one run is missing in the other"
        assert abs(a - b) <= 1e-6 * abs(a) + 1e-8, f"{f}: dark current {b} against {a}"
        n += 1
    assert n == len(t1[dark]) - t1[dark].count(None) > 10, f + ": dark points missing"
    if first is None:
        first = t[dark]
    assert t[dark] == first, f + ": dark currents change from run to run"
print(f"{len(runs)} threaded runs: light identical, {n} dark points within 1e-6 + 1e-8 mA/cm2, runs identical")
PY
