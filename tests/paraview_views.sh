#!/usr/bin/env bash
# The ParaView views in real ParaView, headless: a small comb sweep over
# three gaps and one solve, view_in_paraview.py run by pvbatch with
# --pictures, then the pictures checked by tests/paraview/check_views.py
# (also under pvbatch); and the script's refusal of folders that are not a
# backcomb result.
#
#   paraview_views.sh BINARY CASE.prm
# Exit 77 (skipped) only when pvbatch is not installed.
set -uo pipefail
binary=$1
case_file=$2
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
source "$here/shell_checks.sh"

if ! command -v pvbatch >/dev/null 2>&1; then
  echo "SKIPPED: pvbatch is not installed (Debian: paraview and its Python modules; .ci/setup installs them)"
  exit 77
fi
# Debian's python3-paraview conflicts with python3-vtk9, which libvtk9-dev
# needs: .ci/setup unpacks its modules into /opt/backcomb/paraview-python.
if [[ -d /opt/backcomb/paraview-python/paraview ]]; then
  export PYTHONPATH=/opt/backcomb/paraview-python${PYTHONPATH:+:$PYTHONPATH}
fi

work=$(mktemp -d)
xvfb_pid=""
cleanup() {
  [[ -n $xvfb_pid ]] && kill "$xvfb_pid" 2>/dev/null
  rm -rf "$work"
}
trap cleanup EXIT
cd "$work" || exit 1

# Debian's ParaView renders through X (its offscreen mode aborts): give it
# a virtual display of its own, started here and waited for.
pv=(pvbatch)
echo "from paraview.simple import *; Render(CreateView('RenderView'))" >probe.py
if ! (pvbatch --force-offscreen-rendering probe.py) >offscreen.log 2>&1; then
  command -v Xvfb >/dev/null || fail "pvbatch needs X and Xvfb is not installed (Debian: xvfb)"
  for display in $(seq 90 140); do
    [[ -e /tmp/.X11-unix/X$display || -e /tmp/.X$display-lock ]] && continue
    Xvfb ":$display" -screen 0 1920x1080x24 -nolisten tcp >xvfb.log 2>&1 &
    xvfb_pid=$!
    for _ in $(seq 50); do
      [[ -e /tmp/.X11-unix/X$display ]] && break
      sleep 0.2
    done
    if [[ -e /tmp/.X11-unix/X$display ]] && kill -0 "$xvfb_pid" 2>/dev/null; then
      export DISPLAY=:$display
      break
    fi
    kill "$xvfb_pid" 2>/dev/null
    xvfb_pid=""
  done
  [[ -n $xvfb_pid ]] || fail "could not start Xvfb: $(cat xvfb.log)"
fi

# pvbatch of Debian's ParaView 5.11 aborts now and then (about one run in
# six here) with "bad X server connection" while it opens its first window,
# even on a display that serves other runs: such a run is repeated, at most
# three times, and counted.
x_retries=0
pv_run() { # pv_run WANT_EXIT ARGS...: expect_exit for pvbatch, with the retry
  local want=$1 attempt
  shift
  for attempt in 1 2 3; do
    local got=0
    "${pv[@]}" "$@" >out.log 2>&1 || got=$?
    if ((got != 0)) && grep -q "bad X server connection" out.log && ((attempt < 3)); then
      x_retries=$((x_retries + 1))
      continue
    fi
    if ((got != want)); then
      cat out.log >&2
      fail "expected exit $want, got $got: pvbatch $*"
    fi
    return 0
  done
}

gaps=2,8,20
start=$SECONDS
expect_exit 0 "$binary" sweep "$case_file" --vary "Geometry/Gap=$gaps" --out sweep --quiet
expect_exit 0 "$binary" solve "$case_file" --out solve --quiet
[[ -f sweep/view_in_paraview.py && -f solve/view_in_paraview.py ]] || fail "no view_in_paraview.py beside the results"
echo "paraview_views: backcomb runs took $((SECONDS - start)) s"

start=$SECONDS
pv_run 0 sweep/view_in_paraview.py --pictures sweep-pictures --size 1600x560
grep -q "sweep .*3 time step" out.log || { cat out.log; fail "the script did not report 3 time steps"; }
pv_run 0 solve/view_in_paraview.py solve --pictures solve-pictures --size 1600x560
echo "paraview_views: the view script took $((SECONDS - start)) s for 3 gaps and one solve"

start=$SECONDS
pv_run 0 "$here/paraview/check_views.py" --sweep sweep --sweep-pictures sweep-pictures \
  --gaps "$gaps" --solve solve --solve-pictures solve-pictures --size 1600x560
grep -E "^(ok|FAIL)" out.log
echo "paraview_views: the picture checks took $((SECONDS - start)) s"

# Without --pictures the script only builds the views (as in the ParaView
# window) and writes nothing.
pv_run 0 sweep/view_in_paraview.py
[[ ! -e sweep/pictures.json ]] || fail "the script wrote pictures without --pictures"

# Folders that are not a backcomb result: a clear message, exit 2.
mkdir empty
pv_run 2 solve/view_in_paraview.py empty
grep -q "is not a backcomb result" out.log || { cat out.log; fail "no clear refusal of an empty folder"; }
mkdir other
echo '{"status": "fine"}' >other/summary.json
pv_run 2 solve/view_in_paraview.py other
grep -q "was not written by backcomb" out.log || { cat out.log; fail "no clear refusal of a foreign summary.json"; }
echo "paraview_views: all checks passed ($x_retries pvbatch run(s) repeated after an X connection abort)"
