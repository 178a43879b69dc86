#!/usr/bin/env bash
# Command-line checks of a sweep with uncertain entries on the tiny strip:
#   1. zero uncertainty (uniform:10:10, the case's own mobility, 2 samples):
#      every band percentile equals the plain sweep's value, and the
#      recommended value is the plain sweep's best;
#   2. 2 strip lengths x 3 samples of a log-uniform mobility: sweep.csv
#      with 6 rows, sweep-bands.csv with 2, sensitivity.csv, the bands and
#      the sensitivity in sweep.json; the same command again resumes
#      (solves nothing); another distribution into the same folder is
#      refused as another plan.
#   sweep_bands_cli.sh BINARY CASE
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"
binary=$1
case_file=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

vary=(--vary "Geometry/Strip length=0.5,1")

# 1. Zero uncertainty against the plain sweep.
expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" --out plain --quiet
expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" --out zero --quiet \
  --uncertain "Absorber/Transport/Electron mobility=uniform:10:10" --samples 2
python3 - <<'PY' || fail "zero uncertainty: the bands do not collapse onto the plain sweep"
import csv, json
def rows(path):
    return list(csv.DictReader(l for l in open(path) if not l.startswith('#')))
plain, bands = rows('plain/sweep.csv'), rows('zero/sweep-bands.csv')
assert len(plain) == 2 and len(bands) == 2, (len(plain), len(bands))
for p, b in zip(plain, bands):
    for col in ('PCE_percent', 'collection_efficiency', 'Jsc_mA_per_cm2', 'Voc_V'):
        v = float(p[col])
        for q in ('median', 'p5', 'p95'):
            w = float(b[col + '_' + q])
            assert abs(w - v) <= 1e-12 * max(1.0, abs(v)), (col, q, v, w)
    assert b['samples_with_result'] == '2' and b['samples_failed'] == '0'
plain_rec = json.load(open('plain/sweep.json'))['recommendation']
zero_rec = json.load(open('zero/sweep.json'))['recommendation']
best = plain_rec['best_values']['Geometry/Strip length']
assert zero_rec['recommended'] == best, (zero_rec['recommended'], best)
assert zero_rec['recommended_share'] == 1.0
print('zero uncertainty: bands equal the plain sweep; recommended', best)
PY

# 2. Two lengths x three samples.
uncertain=(--uncertain "Absorber/Transport/Electron mobility=log-uniform:1:100" --samples 3)
expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" "${uncertain[@]}" --out sampled
grep -q "^Over 3 samples of the uncertain entries" out.log || fail "no sampled recommendation on screen"
grep -q "Median over 3 samples per grid point" out.log || fail "no table of medians on screen"
python3 - <<'PY' || fail "the files of a sampled sweep are incomplete"
import csv, json
def rows(path):
    return list(csv.DictReader(l for l in open(path) if not l.startswith('#')))
cases = rows('sampled/sweep.csv')
assert len(cases) == 6, len(cases)
assert [c['sample'] for c in cases] == ['0', '0', '1', '1', '2', '2']
mob = 'Absorber/Transport/Electron mobility [cm^2/(V s)]'
assert mob in cases[0], list(cases[0])
assert cases[0][mob] == cases[1][mob] != cases[2][mob]  # common random numbers per sample
assert abs(float(cases[0][mob]) - 10) < 1e-12                   # Sobol' point 1/2 of log-uniform [1, 100]
bands = rows('sampled/sweep-bands.csv')
assert len(bands) == 2 and all(b['samples'] == '3' for b in bands)
for b in bands:
    lo, med, hi = (float(b['PCE_percent_' + q]) for q in ('p5', 'median', 'p95'))
    assert lo <= med <= hi, (lo, med, hi)
sens = rows('sampled/sensitivity.csv')
assert len(sens) == 2 and sens[0]['entry'] == 'Absorber/Transport/Electron mobility', sens
j = json.load(open('sampled/sweep.json'))
assert len(j['bands']['points']) == 2 and j['sensitivity']['results'][0]['samples'] <= 3
assert j['files']['bands'] == 'sweep-bands.csv' and j['uncertainty']['samples'] == 3
plan = json.load(open('sampled/sweep-plan.json'))
assert len(plan['uncertainty']['values']) == 3
print('sampled sweep: 6 cases, 2 band rows, sensitivity of', sens[0]['entry'])
PY
[[ -s sampled/sweep.svg && -s sampled/sweep.png ]] || fail "no plot with bands"
# The same command resumes: every case is finished already, nothing runs
# and the table stays.
cp sampled/sweep.csv first.csv
expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" "${uncertain[@]}" --out sampled
grep -q "x 3 samples of 1 uncertain entry; 0 to run" out.log || fail "the resumed sweep solved cases again"
cmp first.csv sampled/sweep.csv || fail "resume changed the table"
# Another distribution is another plan.
expect_exit 2 "$binary" sweep "$case_file" "${vary[@]}" --out sampled \
  --uncertain "Absorber/Transport/Electron mobility=log-uniform:1:1000" --samples 3
grep -q "different plan (the uncertain entry Absorber/Transport/Electron mobility or its distribution differs)" out.log ||
  fail "a changed distribution was not refused as another plan"
echo "sweep_bands_cli: 1 passed, 0 failed"
