#!/usr/bin/env bash
# Mobile ions through the command line, on the tiny lit test strip: a solve
# with a hysteresis scan writes both scan directions into jv.csv, the scan
# block and the ions' figures into summary.json (the ion number kept to
# 1e-10, the mean density equal to the entry), the ion-density snapshots
# with their ParaView collection, and the guard-rail warning that 20 nm
# cells do not resolve the 19 nm ionic Debye length of 1e17 cm^-3 (Debye
# length sqrt(eps kT / (q^2 N)); Sze & Ng, Physics of Semiconductor
# Devices, 3rd ed. 2007); then a sweep over the scan rate puts the
# hysteresis index of every rate in sweep.csv.
#
#   ions_cli.sh BINARY TINY_CASE.prm
set -uo pipefail
binary=$1
case_file=$2
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work" || exit 1

ions=(--set "Absorber/Mobile ions/Density=1e17" --set "Absorber/Mobile ions/Diffusion coefficient=1e-9"
  --set "Hysteresis scan/Preconditioning bias=1.2" --set "Hysteresis scan/Preconditioning time=1"
  --set "Hysteresis scan/Snapshots per direction=3" --set "J-V scan/Stop voltage=1.5")

expect_exit 0 "$binary" solve "$case_file" "${ions[@]}" --set "Output/Write fields=true" \
  --set "Hysteresis scan/Scan rate=1" --out one
head -n 2 one/jv.csv | tail -n 1 | grep -q "J_reverse_scan_mA_per_cm2,J_forward_scan_mA_per_cm2" ||
  fail "jv.csv header: $(head -n 2 one/jv.csv | tail -n 1)"
# Every scan bias has both currents (16 biases from 0 to 1.5 V).
n=$(awk -F, 'NR > 2 && $4 != "" && $5 != ""' one/jv.csv | wc -l)
((n == 16)) || fail "jv.csv: $n rows with both scan currents, expected 16"
[[ -f one/ions.pvd ]] || fail "no ions.pvd"
listed=$(grep -c "<DataSet" one/ions.pvd)
((listed == 5)) || fail "ions.pvd: $listed snapshots, expected 5 (3 per direction, the turn once)"
grep -q "mobile_ion_density_per_cm3" one/fields/ions_preconditioned.vtu || fail "no ion density in the snapshot"
python3 - one/summary.json <<'PY' || fail "summary.json"
import json, math, sys
s = json.load(open(sys.argv[1]))
h, m = s["hysteresis_scan"], s["mobile_ions"]
assert h["status"] == "converged", h
assert [c["direction"] for c in h["curves"]] == ["reverse", "forward"]
assert all(c["metrics"] is not None for c in h["curves"])
assert math.isfinite(h["hysteresis_index"]), h["hysteresis_index"]
assert h["ion_number_drift"] < 1e-10, h["ion_number_drift"]
assert abs(m["mean_density_of_state_per_cm3"] / 1e17 - 1) < 1e-9, m
assert abs(m["debye_length_nm"] - 18.899) < 0.01, m["debye_length_nm"]
assert any("ionic Debye length" in w for w in s["warnings"]), s["warnings"]
PY

expect_exit 0 "$binary" sweep "$case_file" "${ions[@]}" \
  --vary "Hysteresis scan/Scan rate=0.01:100:x3" --out rates
python3 - rates/sweep.csv <<'PY' || fail "sweep.csv"
import csv, sys
rows = [r for r in csv.DictReader(l for l in open(sys.argv[1]) if not l.startswith("#"))]
assert len(rows) == 3, rows
for r in rows:
    assert r["hysteresis_index"] != "", r
PY
echo "ions_cli: ok"
