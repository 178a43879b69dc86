#!/usr/bin/env bash
# The command-line habits: help and version (exit 0, first line), a bare
# call and an unknown command (exit 1 with the usage text), the progress
# lines of `solve` with --quiet and --log, and the bash completion of
# commands, options and case-file entry paths.
#
#   cli_habits.sh BINARY CASE.prm COMPLETION_SCRIPT
set -uo pipefail
binary=$1
case_file=$2
completion=$3
source "$(dirname "${BASH_SOURCE[0]}")/shell_checks.sh"

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work" || exit 1

# first_line_is WANT FILE: the first line of FILE is exactly WANT.
first_line_is() {
  local got
  got=$(head -n 1 "$2")
  [[ $got == "$1" ]] || fail "first line of $2: expected '$1', got '$got'"
}

# Help and version: stdout, exit 0.
for help in --help -h help; do
  expect_exit 0 "$binary" "$help"
  first_line_is "usage: backcomb <command> [arguments]" out.log
done
for command in template mesh solve sweep upgrade merge calibrate; do
  for help in --help -h; do
    expect_exit 0 "$binary" "$command" "$help"
    head -n 1 out.log | grep -q "^usage: backcomb $command\b" || fail "$command $help: first line $(head -n 1 out.log)"
  done
done
# A subcommand's help after other arguments, and help on a command.
expect_exit 0 "$binary" solve some.prm --help
first_line_is "usage: backcomb solve CASE.prm [--set \"Section/Name=value\"]... [--out FOLDER]" out.log
expect_exit 0 "$binary" help sweep
grep -q -- "--vary" out.log || fail "help sweep does not describe --vary"

# calibrate: what it needs, named before anything runs (exit 2).
expect_exit 2 "$binary" calibrate "$case_file" --fit "Absorber/Transport/Electron mobility=0.1:10"
grep -q "no --data FILE given" out.log || fail "calibrate without --data: $(cat out.log)"
expect_exit 1 "$binary" calibrate "$case_file" --iterations 0
grep -q -- "--iterations needs a whole number" out.log || fail "calibrate --iterations 0: $(cat out.log)"
expect_exit 1 "$binary" solve "$case_file" --data x.dat
expect_exit 2 "$binary" calibrate "$case_file" --data x.dat --fit "Absorber/Transport/Electron mobility=0.1:10" --loss tukey
grep -q -- "--loss" out.log || fail "calibrate --loss tukey: $(cat out.log)"

expect_exit 0 "$binary" --version
grep -Eq '^backcomb [0-9]+\.[0-9]+\.[0-9]+$' <(head -n 1 out.log) || fail "--version first line: $(head -n 1 out.log)"
for library in deal.II PETSc Gmsh VTK; do
  grep -Eq "^$library [0-9]+\.[0-9]+(\.[0-9]+)?$" out.log || fail "--version names no $library version"
done

# Bare call and unknown command: exit 1, the reason, then the usage text.
expect_exit 1 "$binary"
first_line_is "backcomb: no command given" out.log
grep -q "^usage: backcomb <command>" out.log || fail "bare call: no usage text"
expect_exit 1 "$binary" frobnicate
first_line_is "backcomb: unknown command 'frobnicate'" out.log
grep -q "^usage: backcomb <command>" out.log || fail "unknown command: no usage text"
expect_exit 1 "$binary" --frobnicate
first_line_is "backcomb: unknown command '--frobnicate'" out.log
# An unknown option of a known command: that command's usage.
expect_exit 1 "$binary" solve "$case_file" --frobnicate
first_line_is "backcomb: unknown or incomplete argument '--frobnicate'" out.log
grep -q "^usage: backcomb solve" out.log || fail "unknown option: no usage of solve"
expect_exit 1 "$binary" mesh "$case_file" --log mesh.log
[[ ! -e mesh.log ]] || fail "a refused --log created its file"

# Entry paths for scripts and the completion.
expect_exit 0 "$binary" template --paths
grep -qx "Geometry/Gap" out.log || fail "template --paths lacks Geometry/Gap"
grep -qx "Absorber/Transport/Electron mobility" out.log || fail "template --paths lacks Absorber/Transport/Electron mobility"

# solve: stage lines on stdout; --quiet silences them; --log writes them
# (with the elapsed time) even with --quiet.
expect_exit 0 "$binary" solve "$case_file" --out loud
for stage in "mesh:" "equilibrium: converged" "light J-V:" "losses:"; do
  grep -Eq "^\[ *[0-9]+\.[0-9] s\] $stage" out.log || { cat out.log; fail "solve printed no '$stage' line"; }
done
expect_exit 0 "$binary" solve "$case_file" --out quiet --quiet --log run.log
if grep -q "equilibrium" out.log; then
  cat out.log
  fail "--quiet printed progress lines"
fi
for stage in "equilibrium: converged" "light ramp:" "light J-V:" "losses:" "finished: status converged, exit code 0"; do
  grep -Eq "^\[ *[0-9]+\.[0-9] s\] $stage" run.log || { cat run.log; fail "the --log file has no '$stage' line"; }
done
# One line per J-V point in the log.
points=$(grep -c "V = " run.log)
((points >= 5)) || { cat run.log; fail "the --log file has $points J-V point lines, expected >= 5"; }
expect_exit 4 "$binary" solve "$case_file" --out quiet2 --log no-such-folder/run.log

# Completion: run bash with the script loaded, non-interactively, and
# complete a command, an option and an entry path (in an opened quote and
# without a quote).
complete_words() { # complete_words WORD... : prints COMPREPLY, one per line
  bash -c '
    source "$1"; shift
    COMP_WORDS=("$@"); COMP_CWORD=$((${#COMP_WORDS[@]} - 1))
    COMP_LINE="${COMP_WORDS[*]}"; COMP_POINT=${#COMP_LINE}
    _backcomb
    printf "%s\n" "${COMPREPLY[@]}"' completion "$completion" "$@"
}
complete_words "$binary" so >c.txt
[[ $(cat c.txt) == solve ]] || fail "completing 'so': $(cat c.txt)"
complete_words "$binary" sweep "$case_file" --re >c.txt
[[ $(cat c.txt) == --retry-failed ]] || fail "completing 'sweep CASE --re': $(cat c.txt)"
complete_words "$binary" sweep "$case_file" --uncertain-f >c.txt
[[ $(cat c.txt) == --uncertain-from ]] || fail "completing 'sweep CASE --uncertain-f': $(cat c.txt)"
complete_words "$binary" sweep "$case_file" --sampling l >c.txt
[[ $(cat c.txt) == latin ]] || fail "completing 'sweep CASE --sampling l': $(cat c.txt)"
complete_words "$binary" sweep "$case_file" --uncertain 'Geometry/Ga' >c.txt
[[ $(cat c.txt) == "Geometry/Gap=" ]] || fail "completing an entry path after --uncertain: $(cat c.txt)"
complete_words "$binary" solve "$case_file" --l >c.txt
[[ $(cat c.txt) == --log ]] || fail "completing 'solve CASE --l': $(cat c.txt)"
complete_words "$binary" solve "$case_file" --set '"Absorber/Transport/Electron mo' >c.txt
[[ $(cat c.txt) == "Absorber/Transport/Electron mobility=" ]] || fail "completing an entry path in quotes: $(cat c.txt)"
complete_words "$binary" solve "$case_file" --set 'Geometry/Ga' >c.txt
[[ $(cat c.txt) == "Geometry/Gap=" ]] || fail "completing an entry path: $(cat c.txt)"
complete_words "$binary" sweep "$case_file" --vary '"Absorber/' >c.txt
n=$(wc -l <c.txt)
((n >= 10)) || fail "completing '\"Absorber/' gave $n paths"
grep -v '^Absorber/.*=$' c.txt && fail "completing '\"Absorber/' gave paths outside Absorber"
touch one.prm other.txt
complete_words "$binary" solve "" >c.txt
grep -qx one.prm c.txt || fail "solve does not complete case files: $(cat c.txt)"
grep -qx other.txt c.txt && fail "solve completes a file that is not a case file"
echo "cli_habits: all checks passed"
