# `backcomb upgrade` on the command line: an old case file is printed with
# the current names (exit 0, comments kept), the result reads (`mesh` on it
# gets past the case file), and the old file itself is refused with the way
# to convert it.
# Usage: upgrade_cli.sh BACKCOMB
set -euo pipefail
backcomb=$1
here=$(cd "$(dirname "$0")" && pwd)
source "$here/shell_checks.sh"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

cat >old.prm <<'CASE'
# written for an older backcomb
subsection Geometry
  set Gap = 5        # um
end
subsection Mesh
  set Largest lateral cell = 1
end
subsection J-V sweep
  set Stop voltage = 1.0
  set Dark sweep   = false   # light only
end
subsection Output
  set Loss biases = 0.5
end
CASE

expect_exit 2 "$backcomb" mesh old.prm --out refused
grep -q "old.prm:9: 'J-V sweep/Stop voltage' is an old entry name; the entry is now 'J-V scan/Stop voltage'" out.log ||
  fail "old file: $(cat out.log)"
grep -q "backcomb upgrade old.prm" out.log || fail "no upgrade hint: $(cat out.log)"
[[ ! -e refused ]] || fail "a refused case wrote its output folder"

"$backcomb" upgrade old.prm >new.prm 2>err.log || fail "upgrade failed: $(cat err.log)"
[[ ! -s err.log ]] || fail "upgrade wrote to stderr: $(cat err.log)"
grep -qx "subsection J-V scan" new.prm || fail "section not renamed: $(cat new.prm)"
grep -qx "  set Dark scan    = false   # light only" new.prm || fail "entry not renamed in place: $(cat new.prm)"
grep -qx "  set Power balance biases = 0.5" new.prm || fail "Loss biases not renamed: $(cat new.prm)"
grep -qx "# written for an older backcomb" new.prm || fail "comment lost"
(($(wc -l <new.prm) == $(wc -l <old.prm))) || fail "line count changed"
if grep -q "sweep\|Loss" new.prm; then fail "old names left: $(cat new.prm)"; fi

# The converted file reads and meshes.
expect_exit 0 "$backcomb" mesh new.prm --out meshed
[[ -f meshed/mesh.msh ]] || fail "no mesh from the upgraded file"

# Upgrading a current file changes nothing.
"$backcomb" upgrade new.prm >again.prm || fail "upgrade of a current file failed"
cmp -s new.prm again.prm || fail "upgrade changed a current file"
echo "upgrade_cli: all checks passed"
