#!/usr/bin/env bash
# Command-line checks of `backcomb sweep` and `backcomb merge`:
#   sweep_cli.sh BINARY CASE serial   usage and input errors, a serial sweep
#   sweep_cli.sh BINARY CASE mpi      `mpirun -np 2` gives the serial table
# Each mode works in a fresh temporary folder and removes it at the end.
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"
binary=$1
case_file=$2
mode=$3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

vary=(--vary "Geometry/Strip length=0.5,1,2")

if [[ $mode == serial ]]; then
  # Invalid --vary: exit 2, and nothing is written.
  expect_exit 2 "$binary" sweep "$case_file" --vary "Geometry/Strip length=" --out bad
  expect_exit 2 "$binary" sweep "$case_file" --vary "Geometry/Strip lenght=1,2" --out bad
  expect_exit 2 "$binary" sweep "$case_file" --vary "Geometry/Strip length=1,abc" --out bad
  expect_exit 2 "$binary" sweep "$case_file" --vary "Geometry/Strip length=1,-2" --out bad
  grep -q "Strip_length=-2" out.log || fail "the message does not name the grid point"
  # --in-step with another number of values than its --vary entry.
  expect_exit 2 "$binary" sweep "$case_file" --vary "Geometry/Strip length=0.5,1" \
    --in-step "Absorber/Transport/Electron mobility=10,20,30" --out bad
  grep -q -- "--in-step Absorber/Transport/Electron mobility = 10: has 3 values" out.log ||
    fail "the --in-step count error does not name the option and value"
  [[ ! -e bad ]] || fail "an invalid sweep wrote its folder"
  # Usage errors: exit 1.
  expect_exit 1 "$binary" sweep "$case_file" "${vary[@]}" --task 3 --of 2
  expect_exit 1 "$binary" sweep "$case_file" "${vary[@]}" --task 1
  expect_exit 1 "$binary" solve "$case_file" "${vary[@]}"
  # Merge needs a sweep folder.
  mkdir not-a-sweep
  expect_exit 2 "$binary" merge not-a-sweep
  # A serial sweep: table, summary with the recommendation, plots.
  expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" --out serial
  grep -q "^Best Geometry/Strip length" out.log || fail "no recommendation on screen"
  for f in sweep-plan.json sweep.csv sweep.json sweep.svg sweep.png; do
    [[ -s serial/$f ]] || fail "serial/$f missing"
  done
  # Batch log (not a terminal): one line per finished case.
  [[ $(grep -c "^sweep: \[[0-9]/3\]" out.log) == 3 ]] || fail "expected 3 per-case lines"
  # The merge subcommand rebuilds the same table from the case folders.
  cp serial/sweep.csv first.csv
  expect_exit 0 "$binary" merge serial
  cmp first.csv serial/sweep.csv || fail "merge changed the table"
  echo "sweep_cli serial: 1 passed, 0 failed"
elif [[ $mode == mpi ]]; then
  launcher=$(command -v mpirun || command -v mpiexec || true)
  if [[ -z $launcher ]]; then
    echo "no mpirun: skipped"
    exit 77
  fi
  export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
  expect_exit 0 "$binary" sweep "$case_file" "${vary[@]}" --out serial --quiet
  expect_exit 0 "$launcher" -np 2 --oversubscribe "$binary" sweep "$case_file" "${vary[@]}" --out parallel
  # Each rank took cases as it became free (dynamic claims), and rank 0 merged once.
  grep -q "rank 0: \[" out.log || fail "no per-case line from rank 0"
  grep -q "rank 1: \[" out.log || fail "no per-case line from rank 1"
  [[ $(grep -c "^Best Geometry/Strip length" out.log) == 1 ]] || fail "expected one recommendation"
  cmp serial/sweep.csv parallel/sweep.csv || fail "mpirun -np 2 table differs from the serial one"
  echo "sweep_cli mpi: 1 passed, 0 failed"
else
  fail "unknown mode $mode"
fi
